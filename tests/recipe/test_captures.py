"""Tests for harvester.recipe.captures: the [captures] section, its checks, the user default.

The keys are the ones issue 10 relies on (timemap / timegate templates with ``{url}``,
``original = { pattern, replace }`` in Python ``re`` syntax); expected values are written out
by hand. The rewrite is checked against ``re.sub`` itself (the Python ``re`` documentation's
template rules), the reference the recipe's syntax names.
"""

from __future__ import annotations

import re
from datetime import timedelta
from pathlib import Path

import pytest

from harvester.errors import RecipeError
from harvester.fetch.web_archive import OriginalRewrite, WebArchive
from harvester.recipe import load_recipe
from harvester.recipe.captures import archive_from_options

HEAD = """
[recipe]
name = "league-players"
site = "http://127.0.0.1:8650"
contact = "mailto:analyst@example.org"

[parameters]
season = { from = 2012, to = 2026, current = 2026 }

[fetch]
url = "{site}/seasons/{season}/players.html"
past = "live-then-capture"
capture_near = "{season}-06-30"

[tables.players]
select = "table#players"
"""


def write(tmp_path: Path, captures: str, head: str = HEAD) -> Path:
    path = tmp_path / "recipe.toml"
    path.write_text(head + captures, encoding="utf-8")
    return path


def load_error(path: Path) -> RecipeError:
    with pytest.raises(RecipeError) as caught:
        load_recipe(path)
    return caught.value


@pytest.fixture(autouse=True)
def no_user_config(
    tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch
) -> Path:
    """No user config unless a test writes one (HARVESTER_CONFIG points at a missing file)."""
    folder = tmp_path_factory.mktemp("config")
    monkeypatch.setenv("HARVESTER_CONFIG", str(folder / "config.toml"))
    return folder / "config.toml"


def test_every_captures_key_is_read(tmp_path: Path) -> None:
    path = write(
        tmp_path,
        """
[captures]
timemap = "http://127.0.0.1:8651/timemap/{url}"
timegate = "http://127.0.0.1:8651/timegate/{url}"
original = { pattern = '/web/(\\d{14})/', replace = '/web/\\1raw/' }
rule = "before"
within = "120d"
""",
    )
    archive = load_recipe(path).captures
    assert archive == WebArchive(
        timemap="http://127.0.0.1:8651/timemap/{url}",
        timegate="http://127.0.0.1:8651/timegate/{url}",
        original=OriginalRewrite(r"/web/(\d{14})/", r"/web/\1raw/"),
        rule="before",
        within=timedelta(days=120),
    )


def test_url_goes_into_the_template_exactly_as_planned(tmp_path: Path) -> None:
    # Issue 10: "{url} is replaced by the page's own URL exactly as planned, no extra encoding".
    path = write(tmp_path, '\n[captures]\ntimemap = "https://a.example.net/tm/{url}"\n')
    archive = load_recipe(path).captures
    assert archive is not None
    page = "http://127.0.0.1:8650/seasons/2019/players.html?x=1&y=%C3%A9"
    assert archive.timemap_url(page) == "https://a.example.net/tm/" + page
    assert archive.timegate_url(page) is None


def test_original_rewrites_the_first_match_as_re_sub_would(tmp_path: Path) -> None:
    rewrite = OriginalRewrite(r"/(\d{14})/", r"/\1id_/")
    uri = "https://a.example.net/web/20190628140509/http://s.example.org/20190101000000/x"
    # Python re documentation: re.sub(pattern, repl, string, count=1) replaces the first match.
    assert rewrite.apply(uri) == re.sub(r"/(\d{14})/", r"/\1id_/", uri, count=1)
    assert rewrite.apply("https://a.example.net/nothing-here") is None


@pytest.mark.parametrize(
    ("captures", "key", "words"),
    [
        ('timemap = "http://127.0.0.1:8651/timemap/"', "captures.timemap", "no {url}"),
        ('timemap = "http://127.0.0.1:8651/{season}/{url}"', "captures.timemap", "other than"),
        ('timemap = "ftp://127.0.0.1/{url}"', "captures.timemap", "http(s) URL"),
        ('timegate = "/timegate/{url}"', "captures.timegate", "http(s) URL"),
        ('rule = "nearest"', "captures.rule", "must be one of"),
        ('within = "120"', "captures.within", ""),
        ('within = "4m"', "captures.within", ""),
        ('timemap = "http://h.example/{url}"\nspeed = 1', "captures.speed", "unknown key"),
        ('rule = "before"', "captures.timemap", "needs a timemap or a timegate"),
        (
            "timemap = \"http://h.example/{url}\"\noriginal = { pattern = '(', replace = 'x' }",
            "captures.original.pattern",
            "not a valid regular expression",
        ),
        (
            "timemap = \"http://h.example/{url}\"\noriginal = { pattern = '/(\\d+)/', "
            "replace = '/\\2/' }",
            "captures.original.replace",
            "group '2'",
        ),
        (
            "timemap = \"http://h.example/{url}\"\noriginal = { pattern = '/x/' }",
            "captures.original.replace",
            "missing",
        ),
    ],
)
def test_a_bad_captures_key_is_one_line_naming_it(
    tmp_path: Path, captures: str, key: str, words: str
) -> None:
    error = load_error(write(tmp_path, f"\n[captures]\n{captures}\n"))
    assert error.key == key
    assert words in str(error)
    assert "\n" not in str(error)


def test_a_past_other_than_live_needs_an_archive(tmp_path: Path) -> None:
    error = load_error(write(tmp_path, ""))
    assert error.key == "fetch.past"
    assert "no web archive" in str(error) and "[captures]" in str(error)


def test_live_needs_no_archive(tmp_path: Path) -> None:
    path = write(tmp_path, "", HEAD.replace('past = "live-then-capture"', 'past = "live"'))
    assert load_recipe(path).captures is None


def test_the_user_config_supplies_captures_and_the_recipe_overrides_it_key_by_key(
    tmp_path: Path, no_user_config: Path
) -> None:
    no_user_config.write_text(
        '[captures]\ntimemap = "https://a.example.net/tm/{url}"\nrule = "before"\n',
        encoding="utf-8",
    )
    only_config = load_recipe(write(tmp_path, ""))
    assert only_config.captures == WebArchive(
        timemap="https://a.example.net/tm/{url}", rule="before"
    )
    both = load_recipe(write(tmp_path, '\n[captures]\nwithin = "2w"\n'))
    assert both.captures == WebArchive(
        timemap="https://a.example.net/tm/{url}", rule="before", within=timedelta(weeks=2)
    )


def test_a_bad_user_config_captures_names_the_config_file(
    tmp_path: Path, no_user_config: Path
) -> None:
    no_user_config.write_text('[captures]\ntimemap = "https://a.example.net/tm/"\n', "utf-8")
    error = load_error(write(tmp_path, ""))
    assert error.path == str(no_user_config)
    assert error.key == "captures.timemap"


def test_command_line_options_replace_the_configured_templates(no_user_config: Path) -> None:
    no_user_config.write_text(
        '[captures]\ntimemap = "https://a.example.net/tm/{url}"\n'
        "original = { pattern = '/(\\d{14})/', replace = '/\\1id_/' }\n",
        encoding="utf-8",
    )
    assert archive_from_options(None, None, None, None).timemap == (
        "https://a.example.net/tm/{url}"
    )
    given = archive_from_options(None, "http://127.0.0.1:8651/tg/{url}", "before", "36h")
    assert given == WebArchive(
        timegate="http://127.0.0.1:8651/tg/{url}",
        original=OriginalRewrite(r"/(\d{14})/", r"/\1id_/"),
        rule="before",
        within=timedelta(hours=36),
    )


def test_no_archive_anywhere_is_a_clear_error(no_user_config: Path) -> None:
    with pytest.raises(RecipeError, match="no web archive: give --timemap"):
        archive_from_options(None, None, None, None)
