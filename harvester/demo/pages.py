"""HTML pages of the invented league's demo site, rendered from a ``League`` as plain strings.

The markup is a contract other code relies on (recipes, extractor tests), so it is written out
literally here rather than through a template engine. Paths:

- ``/index.html``: links to every season's pages and every club;
- ``/seasons/{year}/players.html``: ``table#players`` (two-row header, repeated in the body every
  20 rows, tfoot before tbody) and ``table#advanced`` inside an HTML comment;
- ``/seasons/{year}/contracts.html``: ``table#contracts``;
- ``/seasons/{year}/standings.html``: ``table#standings`` with one group row per conference;
- ``/players/{id}.html`` and ``/clubs/{CODE}.html``: small detail pages.
"""

from __future__ import annotations

import re
from html import escape
from pathlib import Path

from harvester.demo.league import CONFERENCES, LEAGUE_NAME, League, Player, PlayerSeason, Season
from harvester.errors import HarvesterError

__all__ = [
    "HEADER_REPEAT",
    "SEASON_PAGES",
    "contract_name",
    "render_page",
    "render_season_page",
    "site_paths",
    "write_site",
]

SEASON_PAGES: tuple[str, ...] = ("players", "contracts", "standings")
HEADER_REPEAT = 20  # body rows between repeated header rows
MINUS = "\u2212"
EM_DASH = "\u2014"

_PLAYER_HEAD = (
    '<th rowspan="2">Player</th><th rowspan="2">Club</th><th rowspan="2">Pos</th>'
    '<th rowspan="2">GP</th><th rowspan="2">Min</th><th colspan="3">Shooting</th>'
    '<th colspan="2">7m</th><th rowspan="2">Ast</th>',
    "<th>Goals</th><th>Shots</th><th>Pct</th><th>Goals</th><th>Shots</th>",
)
_SEASON_PATH = re.compile(r"/seasons/(\d{4})/(players|contracts|standings)\.html")
_PLAYER_PATH = re.compile(r"/players/(p\d{4})\.html")
_CLUB_PATH = re.compile(r"/clubs/([A-Z]{3})\.html")


def site_paths(league: League) -> list[str]:
    """Every page of the site, index first, then season pages, players and clubs."""
    paths = ["/index.html"]
    paths += [f"/seasons/{s.year}/{kind}.html" for s in league.seasons for kind in SEASON_PAGES]
    paths += [f"/players/{player.player_id}.html" for player in league.players]
    paths += [f"/clubs/{club.code}.html" for club in league.clubs]
    return paths


def render_page(league: League, path: str, revision: int = 0) -> str | None:
    """The HTML of the page at ``path`` (league at ``revision``), or None for an unknown path."""
    if path == "/index.html":
        return _render_index(league)
    if match := _SEASON_PATH.fullmatch(path):
        year = int(match[1])
        if all(season.year != year for season in league.seasons):
            return None
        return render_season_page(league, year, match[2], revision)
    if (match := _PLAYER_PATH.fullmatch(path)) and (player := league.player(match[1])):
        return _render_player(league, player)
    if (match := _CLUB_PATH.fullmatch(path)) and league.club(match[1]):
        return _render_club(league, match[1])
    return None


def render_season_page(league: League, year: int, kind: str, revision: int = 0) -> str:
    """One season page: ``kind`` is "players", "contracts" or "standings"."""
    season = league.season(year, revision)
    if kind == "players":
        return _render_players(league, season)
    if kind == "contracts":
        return _render_contracts(league, season)
    if kind == "standings":
        return _render_standings(league, season)
    raise HarvesterError(
        f"demo site: no season page kind {kind!r}", hint=f"use one of {', '.join(SEASON_PAGES)}"
    )


def write_site(league: League, directory: Path, revision: int = 0) -> list[Path]:
    """Write every page of ``site_paths`` under ``directory`` as UTF-8; return the files written."""
    written = []
    for path in site_paths(league):
        html = render_page(league, path, revision)
        assert html is not None  # every listed path renders
        target = directory.joinpath(*path.strip("/").split("/"))
        target.parent.mkdir(parents=True, exist_ok=True)
        # Bytes, not text mode, so no platform newline translation changes the output.
        target.write_bytes(html.encode("utf-8"))
        written.append(target)
    return written


def _document(title: str, body: str) -> str:
    full_title = title if title == LEAGUE_NAME else f"{title} — {LEAGUE_NAME}"
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        f"<title>{escape(full_title)}</title>\n</head>\n<body>\n"
        f'<p class="notice">{LEAGUE_NAME} is fictional: every club, town, player and number on'
        " this site is invented for software testing.</p>\n"
        f'<p><a href="/index.html">{LEAGUE_NAME}</a></p>\n'
        f"<h1>{escape(title)}</h1>\n{body}</body>\n</html>\n"
    )


def _count(value: int) -> str:
    """An integer with thousands commas."""
    return f"{value:,}"


def _tenths_percent(part: int, whole: int) -> str:
    """``part / whole`` as a percent with one decimal, halves rounded up (exact integer math)."""
    tenths = (2000 * part + whole) // (2 * whole)
    return f"{tenths // 10}.{tenths % 10}%"


def _pct(goals: int, shots: int) -> str:
    return _tenths_percent(goals, shots) if shots else EM_DASH


def _minutes(seconds: int) -> str:
    return f"{seconds // 60}:{seconds % 60:02d}"


def _signed(value: int) -> str:
    if value < 0:
        return f"{MINUS}{-value}"
    return f"+{value}" if value > 0 else "0"


def _row(cells: list[str]) -> str:
    return "<tr>" + "".join(f"<td>{cell}</td>" for cell in cells) + "</tr>\n"


def _player_link(player: Player) -> str:
    return f'<a href="/players/{player.player_id}.html">{escape(player.name)}</a>'


def _sorted_rows(league: League, season: Season) -> list[tuple[Player, PlayerSeason]]:
    pairs = []
    for row in season.players:
        player = league.player(row.player_id)
        assert player is not None  # seasons only list players of the league
        pairs.append((player, row))
    return sorted(pairs, key=lambda pair: (-pair[1].goals, pair[0].last, pair[0].first))


def _render_players(league: League, season: Season) -> str:
    pairs = _sorted_rows(league, season)
    body = []
    for index, (player, row) in enumerate(pairs):
        if index and index % HEADER_REPEAT == 0:
            body += [f'<tr class="over-header">{head}</tr>\n' for head in _PLAYER_HEAD]
        marker = "*" if row.captain else ""
        body.append(
            _row(
                [
                    _player_link(player) + marker,
                    row.club,
                    player.position,
                    _count(row.games),
                    _minutes(row.seconds),  # plain digits even past 999 minutes
                    _count(row.goals),
                    _count(row.shots),
                    _pct(row.goals, row.shots),
                    _count(row.seven_goals),
                    _count(row.seven_shots),
                    _count(row.assists),
                ]
            )
        )
    goals = sum(row.goals for _, row in pairs)
    shots = sum(row.shots for _, row in pairs)
    seven_goals = sum(row.seven_goals for _, row in pairs)
    seven_shots = sum(row.seven_shots for _, row in pairs)
    assists = sum(row.assists for _, row in pairs)
    totals = [_count(goals), _count(shots), _pct(goals, shots)]
    totals += [_count(seven_goals), _count(seven_shots), _count(assists)]
    foot = '<tr><td colspan="5">League totals</td>' + "".join(f"<td>{t}</td>" for t in totals)
    table = (
        '<table id="players" class="stats">\n'
        f"<caption>Player statistics {season.year}</caption>\n"
        "<thead>\n" + "".join(f"<tr>{head}</tr>\n" for head in _PLAYER_HEAD) + "</thead>\n"
        # tfoot before tbody: allowed by HTML, and the table model still puts it last.
        f"<tfoot>\n{foot}</tr>\n</tfoot>\n"
        "<tbody>\n" + "".join(body) + "</tbody>\n</table>\n"
        '<p class="footnote">* club captain</p>\n'
    )
    return _document(f"Player statistics {season.year}", table + _advanced(season, pairs))


def _advanced(season: Season, pairs: list[tuple[Player, PlayerSeason]]) -> str:
    club_shots: dict[str, int] = {}
    for row in season.players:
        club_shots[row.club] = club_shots.get(row.club, 0) + row.shots
    rows = []
    for player, row in pairs:
        # Goals per 60 minutes to two decimals, halves rounded up, in exact integer math.
        hundredths = (2 * row.goals * 360_000 + row.seconds) // (2 * row.seconds)
        per_60 = f"{hundredths // 100}.{hundredths % 100:02d}"
        share = _tenths_percent(row.shots, club_shots[row.club])
        rows.append(_row([_player_link(player), row.club, per_60, share]))
    # Served inside a comment, as sites do to defer rendering: parsers see no table here.
    return (
        '<div id="all_advanced"><!-- <table id="advanced">\n<thead>\n'
        "<tr><th>Player</th><th>Club</th><th>Goals per 60</th><th>Shot share</th></tr>\n"
        "</thead>\n<tbody>\n" + "".join(rows) + "</tbody>\n</table> --></div>\n"
    )


ACCENTED_EVERY, ACCENTED_AT = 19, 3  # players whose number % 19 == 3: an accent on contracts
MISSPELT_EVERY, MISSPELT_AT = 53, 7  # players whose number % 53 == 7: a first name cut short


def contract_name(player: Player) -> str:
    """How the contracts page writes a player: "Last, First", as clerks write names — with an
    accent the players page leaves out for some (the same person once folded), a suffix written
    either way ("Last Jr., First" or "Last, First Jr", no period), and for a few the first name
    missing its last letter (a true mismatch a join check should show)."""
    number = int(player.player_id[1:])
    last, first = player.last, player.first
    if number % ACCENTED_EVERY == ACCENTED_AT:
        last = last.replace("e", "\u00e9", 1) if "e" in last else last.replace("o", "\u00f6", 1)
    if number % MISSPELT_EVERY == MISSPELT_AT and len(first) > 2:
        first = first[:-1]
    if player.suffix and number % 2:
        return f"{last}, {first} {player.suffix.rstrip('.')}"
    if player.suffix:
        return f"{last} {player.suffix}, {first}"
    return f"{last}, {first}"


def _render_contracts(league: League, season: Season) -> str:
    listed = []
    for contract in season.contracts:
        player = league.player(contract.player_id)
        assert player is not None  # seasons only list players of the league
        listed.append((player, contract))
    listed.sort(key=lambda pair: (pair[0].last, pair[0].first))
    body = "".join(
        _row(
            [
                escape(contract_name(player)),
                contract.club,
                EM_DASH if contract.salary is None else f"${contract.salary:,}",
                str(contract.years),
                contract.expires.isoformat(),
            ]
        )
        for player, contract in listed
    )
    table = (
        '<table id="contracts">\n<thead>\n<tr><th>Player</th><th>Club</th><th>Salary</th>'
        "<th>Years</th><th>Expires</th></tr>\n</thead>\n<tbody>\n" + body + "</tbody>\n</table>\n"
        f'<p class="footnote">{EM_DASH} salary not disclosed</p>\n'
    )
    return _document(f"Contracts {season.year}", table)


def _render_standings(league: League, season: Season) -> str:
    body = []
    for conference in CONFERENCES:
        codes = [club.code for club in league.clubs if club.conference == conference]
        body.append(f'<tr class="group"><th colspan="10">{conference}</th></tr>\n')
        for rank, standing in enumerate(season.ranked(codes), start=1):
            club = league.club(standing.club)
            assert club is not None  # standings only list clubs of the league
            link = f'<a href="/clubs/{club.code}.html">{escape(club.name)}</a>'
            numbers = [standing.games, standing.wins, standing.draws, standing.losses]
            numbers += [standing.goals_for, standing.goals_against]
            cells = [str(rank), link, *(_count(n) for n in numbers)]
            body.append(_row([*cells, _signed(standing.goal_difference), str(standing.points)]))
    head = "".join(
        f"<th>{name}</th>"
        for name in ("Rank", "Club", "GP", "W", "D", "L", "GF", "GA", "GD", "Pts")
    )
    table = (
        f'<table id="standings">\n<thead>\n<tr>{head}</tr>\n</thead>\n<tbody>\n'
        + "".join(body)
        + "</tbody>\n</table>\n"
    )
    return _document(f"Standings {season.year}", table)


def _render_player(league: League, player: Player) -> str:
    bio = (
        '<table id="bio">\n<tbody>\n'
        f"<tr><th>Name</th><td>{escape(player.name)}</td></tr>\n"
        f"<tr><th>Born</th><td>{player.born.isoformat()}</td></tr>\n"
        f"<tr><th>Position</th><td>{player.position}</td></tr>\n"
        "</tbody>\n</table>\n"
    )
    career = "".join(
        f'<tr><td>{season.year}</td><td><a href="/clubs/{row.club}.html">{row.club}</a></td></tr>\n'
        for season in league.seasons
        for row in season.players
        if row.player_id == player.player_id
    )
    table = (
        '<table id="career">\n<thead>\n<tr><th>Season</th><th>Club</th></tr>\n</thead>\n'
        f"<tbody>\n{career}</tbody>\n</table>\n"
    )
    return _document(player.name, bio + table)


def _render_club(league: League, code: str) -> str:
    club = league.club(code)
    assert club is not None  # render_page checked the code
    rows = [("Name", escape(club.name)), ("Code", club.code), ("Town", escape(club.town))]
    rows.append(("Conference", club.conference))
    cells = "".join(f"<tr><th>{name}</th><td>{value}</td></tr>\n" for name, value in rows)
    return _document(club.name, f'<table id="club">\n<tbody>\n{cells}</tbody>\n</table>\n')


def _render_index(league: League) -> str:
    seasons = "".join(
        f"<li>{s.year}: "
        + " · ".join(f'<a href="/seasons/{s.year}/{kind}.html">{kind}</a>' for kind in SEASON_PAGES)
        + "</li>\n"
        for s in league.seasons
    )
    clubs = "".join(
        f'<li><a href="/clubs/{club.code}.html">{escape(club.name)}</a> ({club.conference})</li>\n'
        for club in league.clubs
    )
    body = f'<h2>Seasons</h2>\n<ul id="seasons">\n{seasons}</ul>\n'
    body += f'<h2>Clubs</h2>\n<ul id="clubs">\n{clubs}</ul>\n'
    return _document(LEAGUE_NAME, body)
