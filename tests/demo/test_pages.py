"""Tests for the demo site's HTML: the markup contract, read back with reference parsers.

Pages are parsed with lxml, html5lib and pandas.read_html (reference libraries), never with
harvester's own extractor, and every expected value is recomputed here from the parsed cells.
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter
from decimal import ROUND_HALF_UP, Decimal
from io import StringIO
from pathlib import Path

import html5lib
import lxml.html
import pandas as pd
import pytest
from lxml.etree import _Element

from harvester.demo.league import League, build_league
from harvester.demo.pages import render_page, render_season_page, site_paths, write_site
from harvester.errors import HarvesterError

EM_DASH = "\u2014"
MINUS = "\u2212"
# The header rows exactly as the contract spells them: (text, rowspan, colspan) per th.
HEAD_ROW_1 = [
    ("Player", "2", None), ("Club", "2", None), ("Pos", "2", None), ("GP", "2", None),
    ("Min", "2", None), ("Shooting", None, "3"), ("7m", None, "2"), ("Ast", "2", None),
]  # fmt: skip
HEAD_ROW_2 = [(name, None, None) for name in ("Goals", "Shots", "Pct", "Goals", "Shots")]


@pytest.fixture(scope="module")
def league() -> League:
    return build_league()


@pytest.fixture(scope="module")
def players_html(league: League) -> str:
    html = render_page(league, "/seasons/2026/players.html")
    assert html is not None
    return html


def page(league: League, path: str, revision: int = 0) -> str:
    html = render_page(league, path, revision)
    assert html is not None, path
    return html


def table(html: str, table_id: str) -> _Element:
    tables = lxml.html.fromstring(html).xpath(f'//table[@id="{table_id}"]')
    assert len(tables) == 1
    return tables[0]


def number(text: str) -> int:
    # Thousands commas are common practice, no published source.
    assert re.fullmatch(r"\d{1,3}(,\d{3})*", text), text
    return int(text.replace(",", ""))


def percent(part: int, whole: int, places: str = "0.1") -> str:
    # Half-up rounding of the exact quotient, done with decimal (not the code under test).
    return str((Decimal(part * 100) / Decimal(whole)).quantize(Decimal(places), ROUND_HALF_UP))


def head_cells(row: _Element) -> list[tuple[str, str | None, str | None]]:
    assert all(cell.tag == "th" for cell in row)
    return [(c.text_content(), c.get("rowspan"), c.get("colspan")) for c in row]


def player_rows(html: str) -> list[list[str]]:
    """Body data rows of table#players as cell texts (over-header rows left out)."""
    body = table(html, "players").find("tbody")
    return [[td.text_content() for td in tr] for tr in body if tr.get("class") != "over-header"]


# --- every page -------------------------------------------------------------------------------


def test_site_lists_every_page_once(league: League) -> None:
    paths = site_paths(league)
    assert len(paths) == len(set(paths))
    # 1 index + 15 seasons × 3 pages + one page per player + one per club (worked out by hand).
    assert len(paths) == 1 + 15 * 3 + len(league.players) + 10
    for year in range(2012, 2027):
        for kind in ("players", "contracts", "standings"):
            assert f"/seasons/{year}/{kind}.html" in paths


def test_every_page_renders_as_conforming_html(league: League) -> None:
    # A strict html5lib parser raises on any parse error (HTML §13.2, the parsing algorithm).
    parser = html5lib.HTMLParser(strict=True)
    for path in site_paths(league):
        html = page(league, path)
        assert html.startswith("<!DOCTYPE html>\n"), path
        assert '<meta charset="utf-8">' in html, path
        assert re.search(r"<title>[^<]+</title>", html), path
        assert "is fictional" in lxml.html.fromstring(html).text_content(), path
        parser.parse(html)


def test_every_link_points_to_a_page_of_the_site(league: League) -> None:
    paths = set(site_paths(league))
    for path in paths:
        document = lxml.html.fromstring(page(league, path))
        for href in document.xpath("//a/@href"):
            assert href in paths, (path, href)


@pytest.mark.parametrize(
    "path",
    [
        "/",
        "",
        "/nope.html",
        "/seasons/2011/players.html",
        "/seasons/2027/standings.html",
        "/seasons/2026/goalkeepers.html",
        "/seasons/2026/players.html?page=2",
        "/players/p9999.html",
        "/players/P0001.html",
        "/clubs/ZZZ.html",
        "/robots.txt",
    ],
)
def test_unknown_paths_give_none(league: League, path: str) -> None:
    assert render_page(league, path) is None


def test_unknown_season_page_kind_is_refused(league: League) -> None:
    with pytest.raises(HarvesterError, match="goalkeepers"):
        render_season_page(league, 2026, "goalkeepers")


def test_same_seed_renders_the_same_bytes() -> None:
    one, other = build_league(), build_league()
    for path in site_paths(one):
        assert page(one, path).encode() == page(other, path).encode(), path


def test_different_seed_renders_different_pages(players_html: str) -> None:
    assert page(build_league(12345), "/seasons/2026/players.html") != players_html


def test_index_links_every_season_page(league: League) -> None:
    hrefs = lxml.html.fromstring(page(league, "/index.html")).xpath("//ul[@id='seasons']//a/@href")
    kinds = ("players", "contracts", "standings")
    expected = [f"/seasons/{y}/{k}.html" for y in range(2012, 2027) for k in kinds]
    assert hrefs == expected


# --- players ----------------------------------------------------------------------------------


def test_players_header_is_two_rows_with_spans(players_html: str) -> None:
    players = table(players_html, "players")
    assert players.get("class") == "stats"
    assert players.find("caption").text_content() == "Player statistics 2026"
    head = players.find("thead")
    assert [head_cells(row) for row in head] == [HEAD_ROW_1, HEAD_ROW_2]


def test_pandas_collapses_the_header_to_the_contract_names(players_html: str) -> None:
    # pandas.read_html turns a two-row thead into (group, name) column pairs.
    frame = pd.read_html(StringIO(players_html), attrs={"id": "players"})[0]
    names = [a.lower() if a == b else f"{a}_{b}".lower() for a, b in frame.columns]
    assert names == [
        "player", "club", "pos", "gp", "min", "shooting_goals", "shooting_shots",
        "shooting_pct", "7m_goals", "7m_shots", "ast",
    ]  # fmt: skip
    # The table model puts tfoot last whatever its place in the source (HTML §4.9.12.1 step 3).
    assert frame.iloc[-1, 0] == "League totals"


def test_header_rows_repeat_every_twenty_body_rows(players_html: str) -> None:
    rows = list(table(players_html, "players").find("tbody"))
    data_since_header, data_rows, index = 0, 0, 0
    while index < len(rows):
        if rows[index].get("class") == "over-header":
            assert data_since_header == 20
            assert rows[index + 1].get("class") == "over-header"
            assert head_cells(rows[index]) == HEAD_ROW_1
            assert head_cells(rows[index + 1]) == HEAD_ROW_2
            data_since_header, index = 0, index + 2
            continue
        assert all(cell.tag == "td" for cell in rows[index])
        data_since_header, data_rows, index = data_since_header + 1, data_rows + 1, index + 1
    assert data_rows == 140
    # 140 rows: a repeat before rows 21, 41, …, 121 and none after the last row: 6 pairs.
    assert sum(row.get("class") == "over-header" for row in rows) == 12


def test_tfoot_comes_before_tbody_in_the_source(players_html: str) -> None:
    source = players_html[players_html.index('<table id="players"') :]
    source = source[: source.index("</table>")]
    assert source.index("<tfoot>") < source.index("<tbody>")
    # html5lib keeps source order in the tree (HTML §13.2.6.4.9 inserts row groups in order).
    document = html5lib.parse(players_html, namespaceHTMLElements=False)
    players = document.find(".//table[@id='players']")
    assert players is not None
    assert [child.tag for child in players] == ["caption", "thead", "tfoot", "tbody"]


def test_player_cells_link_and_mark_one_captain_per_club(players_html: str) -> None:
    body = table(players_html, "players").find("tbody")
    captains: Counter[str] = Counter()
    for tr in body:
        if tr.get("class") == "over-header":
            continue
        cell, club = tr[0], tr[1].text_content()
        links = cell.findall("a")
        assert len(links) == 1 and cell.text is None
        assert re.fullmatch(r"/players/p\d{4}\.html", links[0].get("href"))
        assert re.fullmatch(r"[A-Z][a-z]+ [A-Z][a-z]+( Jr\.)?", links[0].text)
        assert links[0].tail in (None, "*")
        captains[club] += links[0].tail == "*"
    assert len(captains) == 10
    assert set(captains.values()) == {1}


@pytest.mark.parametrize("year", range(2012, 2027))
def test_player_numbers_are_consistent(league: League, year: int) -> None:
    # Every season: some shooting percentages are exact halves (e.g. 18/32 = 56.25 %).
    goalkeepers_without_shots = 0
    for row in player_rows(page(league, f"/seasons/{year}/players.html")):
        games = number(row[3])
        minutes = re.fullmatch(r"(\d+):([0-5]\d)", row[4])  # plain digits, no comma
        assert minutes, row[4]
        # A game lasts 2 × 30 minutes (IHF Rules of the Game, rule 2:1; from memory).
        assert int(minutes[1]) * 60 + int(minutes[2]) <= games * 3600
        goals, shots, seven_goals, seven_shots = (number(row[i]) for i in (5, 6, 8, 9))
        assert goals <= shots and seven_goals <= seven_shots and seven_goals <= goals
        if shots:
            assert row[7] == percent(goals, shots) + "%"
        else:
            assert row[7] == EM_DASH
            goalkeepers_without_shots += row[2] == "GK"
    assert goalkeepers_without_shots > 0


def test_league_totals_add_up(players_html: str) -> None:
    rows = player_rows(players_html)
    foot = table(players_html, "players").find("tfoot")
    assert len(foot) == 1
    cells = list(foot[0])
    assert (cells[0].text_content(), cells[0].get("colspan")) == ("League totals", "5")
    texts = [cell.text_content() for cell in cells[1:]]
    sums = [sum(number(row[i]) for row in rows) for i in (5, 6, 8, 9, 10)]
    assert [number(texts[i]) for i in (0, 1, 3, 4, 5)] == sums
    assert texts[2] == percent(sums[0], sums[1]) + "%"
    # A season has well over 1,000 goals, so the comma form shows up.
    assert "," in texts[0]


def test_minutes_past_999_have_no_thousands_comma(league: League) -> None:
    minutes = [
        row[4]
        for year in range(2012, 2027)
        for row in player_rows(page(league, f"/seasons/{year}/players.html"))
    ]
    assert all(re.fullmatch(r"\d+:\d\d", text) for text in minutes)
    assert any(int(text.split(":")[0]) >= 1000 for text in minutes)


def test_club_goals_match_the_standings(league: League, players_html: str) -> None:
    scored: Counter[str] = Counter()
    for row in player_rows(players_html):
        scored[row[1]] += number(row[5])
    standings = table(page(league, "/seasons/2026/standings.html"), "standings")
    goals_for = {}
    for tr in standings.find("tbody"):
        if tr.get("class") != "group":
            code = tr[1].find("a").get("href").split("/")[-1].removesuffix(".html")
            goals_for[code] = number(tr[6].text_content())
    assert scored == goals_for


# --- advanced (inside a comment) --------------------------------------------------------------


def advanced_table(html: str) -> _Element:
    comments = lxml.html.fromstring(html).xpath("//div[@id='all_advanced']/comment()")
    assert len(comments) == 1
    return table(comments[0].text, "advanced")


def test_advanced_table_exists_only_inside_a_comment(players_html: str) -> None:
    # Comments stay comments, so parsers find no table there (HTML §13.2.6.4.9 "Insert a comment").
    assert lxml.html.fromstring(players_html).xpath("//table[@id='advanced']") == []
    document = html5lib.parse(players_html, namespaceHTMLElements=False)
    assert document.find(".//table[@id='advanced']") is None
    with pytest.raises(ValueError, match="No tables found"):
        pd.read_html(StringIO(players_html), attrs={"id": "advanced"})
    wrapped = r'<div id="all_advanced"><!-- <table id="advanced">.*</table> --></div>'
    assert re.search(wrapped, players_html, re.DOTALL)


def test_advanced_table_values(players_html: str) -> None:
    advanced = advanced_table(players_html)
    head = advanced.find("thead")
    assert len(head) == 1
    assert head_cells(head[0]) == [
        ("Player", None, None), ("Club", None, None),
        ("Goals per 60", None, None), ("Shot share", None, None),
    ]  # fmt: skip
    rows = {row[0]: row for row in player_rows(players_html)}
    club_shots: Counter[str] = Counter()
    for row in rows.values():
        club_shots[row[1]] += number(row[6])
    body = advanced.find("tbody")
    assert len(body) == 140
    for tr in body:
        name, club, per_60, share = (td.text_content() for td in tr)
        main = rows.get(name) or rows[name + "*"]
        assert club == main[1]
        minutes, seconds = (int(part) for part in main[4].split(":"))
        assert per_60 == percent(number(main[5]) * 36, minutes * 60 + seconds, "0.01")
        assert share == percent(number(main[6]), club_shots[club]) + "%"


# --- contracts --------------------------------------------------------------------------------


def test_contracts_table(league: League, players_html: str) -> None:
    contracts = table(page(league, "/seasons/2026/contracts.html"), "contracts")
    head = contracts.find("thead")
    assert [th.text_content() for th in head[0]] == ["Player", "Club", "Salary", "Years", "Expires"]
    players = {row[0].rstrip("*"): row[1] for row in player_rows(players_html)}
    unknown = 0
    names = set()
    accented, misspelt, suffixed = [], [], []
    for tr in contracts.find("tbody"):
        name, club, salary, years, expires = (td.text_content() for td in tr)
        assert tr[0].find("a") is None
        # "Last, First"; a suffix either way: "Last Jr., First" or "Last, First Jr"
        written = re.fullmatch(r"(\w+)( Jr\.)?, (\w+)( Jr)?", name)
        assert written and not (written[2] and written[4]), name
        last, first = written[1], written[3]
        suffix = " Jr." if written[2] or written[4] else ""
        if suffix:
            suffixed.append(name)
        # The page writes a few names as a clerk might: an accent the players page leaves out
        # (NFKD folds it away, UAX #15), or a first name missing its last letter.
        folded = "".join(
            c for c in unicodedata.normalize("NFKD", last) if unicodedata.category(c) != "Mn"
        )
        if folded != last:
            accented.append(name)
        if f"{first} {folded}{suffix}" not in players:
            (full,) = [
                p for p in players if p.startswith(first) and p.endswith(f" {folded}{suffix}")
            ]
            misspelt.append(name)
            first = full.split(" ")[0]
        names.add(f"{first} {folded}{suffix}")
        assert players[f"{first} {folded}{suffix}"] == club
        assert salary == EM_DASH or re.fullmatch(r"\$\d{1,3}(,\d{3})*", salary), salary
        unknown += salary == EM_DASH
        assert years in {"1", "2", "3", "4", "5"}
        year = re.fullmatch(r"(\d{4})-06-30", expires)
        assert year and 2026 <= int(year[1]) <= 2026 + int(years) - 1
    assert names == set(players)
    assert 0 < unknown < 140 * 0.25
    assert len(accented) == 5 and len(misspelt) == 2  # the demo's join check shows these two
    # Both ways of writing a suffix appear, and "John Smith" stands beside "John Smith Jr.".
    assert any(n.endswith(" Jr") for n in suffixed)  # "Last, First Jr"
    assert any(" Jr., " in n for n in suffixed)  # "Last Jr., First"
    assert any(n.removesuffix(" Jr.") in names for n in names if n.endswith(" Jr."))


# --- standings --------------------------------------------------------------------------------


def test_standings_group_rows_span_the_width(league: League) -> None:
    standings = table(page(league, "/seasons/2026/standings.html"), "standings")
    head = [th.text_content() for th in standings.find("thead")[0]]
    assert head == ["Rank", "Club", "GP", "W", "D", "L", "GF", "GA", "GD", "Pts"]
    shape = []
    for tr in standings.find("tbody"):
        if tr.get("class") == "group":
            assert len(tr) == 1 and tr[0].tag == "th" and tr[0].get("colspan") == "10"
            shape.append(tr[0].text_content())
        else:
            assert len(tr) == 10
            shape.append(tr[0].text_content())
    ranks = ["1", "2", "3", "4", "5"]
    assert shape == ["North Conference", *ranks, "South Conference", *ranks]


@pytest.mark.parametrize("year", range(2012, 2027))
def test_standings_numbers_are_consistent(league: League, year: int) -> None:
    frame = pd.read_html(StringIO(page(league, f"/seasons/{year}/standings.html")))[0]
    # pandas.read_html copies a colspan cell into every column it spans (here the group rows).
    clubs = frame[frame["Rank"] != frame["GP"]]
    assert len(clubs) == 10
    total_difference, signs = 0, set()
    for _, row in clubs.iterrows():
        games, wins, draws, losses, scored, conceded, points = (
            int(str(row[column])) for column in ("GP", "W", "D", "L", "GF", "GA", "Pts")
        )
        assert wins + draws + losses == games == 18
        assert points == 2 * wins + draws
        difference = scored - conceded
        # Negative with U+2212 MINUS SIGN, positive with "+", zero bare (the page contract).
        expected = f"{MINUS}{-difference}" if difference < 0 else f"+{difference}"
        assert str(row["GD"]) == (expected if difference else "0")
        total_difference += difference
        signs.add(str(row["GD"])[0])
    assert total_difference == 0
    assert MINUS in signs and "+" in signs


def test_zero_goal_difference_is_written_bare() -> None:
    # Find, through the data model, a league and season where some club has GF == GA.
    for seed in range(1, 60):
        other = build_league(seed)
        level = [
            (s.year, r.club) for s in other.seasons for r in s.standings if r.goal_difference == 0
        ]
        if level:
            break
    else:
        pytest.fail("no season with a zero goal difference in seeds 1-59")
    year, code = level[0]
    standings = table(page(other, f"/seasons/{year}/standings.html"), "standings")
    for tr in standings.find("tbody"):
        if tr.get("class") != "group" and tr[1].find("a").get("href") == f"/clubs/{code}.html":
            assert tr[8].text_content() == "0"
            return
    pytest.fail(f"club {code} missing from the {year} standings")


def test_standings_club_cells_link_to_club_pages(league: League) -> None:
    standings = table(page(league, "/seasons/2026/standings.html"), "standings")
    names = {club.code: club.name for club in league.clubs}
    for tr in standings.find("tbody"):
        if tr.get("class") != "group":
            link = tr[1].find("a")
            code = re.fullmatch(r"/clubs/([A-Z]{3})\.html", link.get("href"))
            assert code and link.text == names[code[1]]


# --- player and club pages --------------------------------------------------------------------


def test_bio_page(league: League, players_html: str) -> None:
    link = table(players_html, "players").find("tbody")[0][0].find("a")
    bio = table(page(league, link.get("href")), "bio")
    rows = {tr[0].text_content(): tr[1].text_content() for tr in bio.iter("tr")}
    assert list(rows) == ["Name", "Born", "Position"]
    assert rows["Name"] == link.text
    assert re.fullmatch(r"(19|20)\d\d-[01]\d-[0-3]\d", rows["Born"])
    assert rows["Position"] in {"GK", "LW", "RW", "LB", "CB", "RB", "PV"}


# --- revisions and writing --------------------------------------------------------------------


def test_revision_changes_only_latest_season_pages(league: League) -> None:
    for path in ("/seasons/2025/players.html", "/seasons/2026/standings.html", "/index.html"):
        assert page(league, path, 1) == page(league, path), path
    assert page(league, "/seasons/2026/players.html", 1) != page(
        league, "/seasons/2026/players.html"
    )


def test_revision_changes_exactly_one_salary(league: League) -> None:
    def rows(revision: int) -> list[list[str]]:
        contracts = table(page(league, "/seasons/2026/contracts.html", revision), "contracts")
        return [[td.text_content() for td in tr] for tr in contracts.find("tbody")]

    changed = [(a, b) for a, b in zip(rows(0), rows(1), strict=True) if a != b]
    assert len(changed) == 1
    assert changed[0][0][2] != changed[0][1][2] and changed[0][0][:2] == changed[0][1][:2]


def test_write_site_writes_every_page(league: League, tmp_path: Path) -> None:
    written = write_site(league, tmp_path)
    paths = site_paths(league)
    assert written == [tmp_path / path.lstrip("/") for path in paths]
    assert sorted(p for p in tmp_path.rglob("*") if p.is_file()) == sorted(written)
    standings = (tmp_path / "seasons" / "2019" / "standings.html").read_bytes()
    assert standings == page(league, "/seasons/2019/standings.html").encode("utf-8")
    assert MINUS.encode("utf-8") in standings  # UTF-8 bytes E2 88 92 (Unicode U+2212)
