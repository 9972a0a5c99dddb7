"""`harvester robots`: the relied-on form (DESIGN §5) and the live form against the demo server."""

from __future__ import annotations

from pathlib import Path

from typer.testing import CliRunner

from harvester.cli import app
from harvester.demo.server import DemoServer

RUNNER = CliRunner()

# Worked by hand from RFC 9309: the harvester group is selected (§2.2.1, case-insensitive),
# longest match wins and Allow wins a tie (§2.2.2), '*' and '$' per §2.2.3.
ROBOTS = """\
User-agent: *
Disallow: /

User-agent: Harvester
Disallow: /seasons/
Allow: /seasons/2026/
Disallow: /*.json$
Allow: /tie
Disallow: /tie
"""


def run(tmp_path: Path, *args: str) -> tuple[int, str, str]:
    robots = tmp_path / "robots.txt"
    robots.write_text(ROBOTS, encoding="utf-8")
    result = RUNNER.invoke(app, ["robots", "--robots-file", str(robots), *args])
    return result.exit_code, result.stdout, result.stderr


def test_one_line_per_url_in_order(tmp_path: Path) -> None:
    urls = [
        "http://127.0.0.1:8650/seasons/2026/players.html",
        "http://127.0.0.1:8650/seasons/2019/players.html",
        "/index.html",
        "/data/players.json",
        "/data/players.json?x=1",
        "/tie",
        "/robots.txt",
    ]
    code, out, _ = run(tmp_path, "--agent", "harvester", *urls)
    assert code == 0
    assert out.splitlines() == [
        f"allowed\t{urls[0]}",  # Allow /seasons/2026/ is longer than Disallow /seasons/
        f"disallowed\t{urls[1]}",
        f"allowed\t{urls[2]}",  # no rule of the harvester group matches
        f"disallowed\t{urls[3]}",
        f"allowed\t{urls[4]}",  # '$' anchors the end: the query breaks the match
        f"allowed\t{urls[5]}",  # equal length: Allow wins
        f"allowed\t{urls[6]}",  # /robots.txt is always allowed
    ]


def test_another_agent_falls_back_to_the_star_group(tmp_path: Path) -> None:
    code, out, _ = run(tmp_path, "--agent", "otherbot", "/index.html", "/robots.txt")
    assert code == 0
    assert out == "disallowed\t/index.html\nallowed\t/robots.txt\n"


def test_explain_names_the_deciding_rule(tmp_path: Path) -> None:
    _, out, _ = run(tmp_path, "--agent", "harvester", "--explain", "/seasons/2019/")
    assert out == "disallowed\t/seasons/2019/\tline 5: Disallow: /seasons/\n"


def test_live_form_fetches_robots_and_prints_the_crawl_delay(demo_site: DemoServer) -> None:
    result = RUNNER.invoke(
        app,
        [
            "robots",
            "--contact",
            "mailto:analyst@example.org",
            demo_site.url("/seasons/2026/players.html"),
            demo_site.url("/private/"),
        ],
    )
    assert result.exit_code == 0, result.stderr
    assert result.stdout.splitlines() == [
        f"allowed\t{demo_site.url('/seasons/2026/players.html')}",
        f"disallowed\t{demo_site.url('/private/')}",
        "crawl-delay\t0.05",
    ]
    assert [record.path for record in demo_site.log] == ["/robots.txt"]


def test_live_form_without_a_contact_is_refused(demo_site: DemoServer) -> None:
    result = RUNNER.invoke(app, ["robots", demo_site.url("/index.html")])
    assert result.exit_code == 4
    assert "anonymously" in result.stderr and result.stderr.count("\n") == 1
    assert demo_site.log == []


def test_json_format_carries_the_rule(tmp_path: Path) -> None:
    import json

    code, out, _ = run(tmp_path, "--agent", "harvester", "--format", "json", "/seasons/2019/")
    assert code == 0
    record = json.loads(out)
    assert record["agent"] == "harvester" and record["crawl_delay"] == {}
    (verdict,) = record["urls"]
    assert {key: verdict[key] for key in ("url", "allowed", "rule", "line")} == {
        "url": "/seasons/2019/",
        "allowed": False,
        "rule": "Disallow: /seasons/",
        "line": 5,
    }
    assert isinstance(verdict["reason"], str) and verdict["reason"]


def test_an_agent_with_no_product_token_is_a_one_line_error(tmp_path: Path) -> None:
    code, out, err = run(tmp_path, "--agent", "/1.0", "/index.html")
    assert code == 4 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1


def test_json_from_a_saved_file_reports_its_crawl_delay(tmp_path: Path) -> None:
    import json

    saved = tmp_path / "robots.txt"
    saved.write_text("User-agent: *\nCrawl-delay: 2.5\nDisallow: /private/\n", encoding="utf-8")
    args = ["robots", "--robots-file", str(saved), "--agent", "harvester", "/a", "--format"]
    result = RUNNER.invoke(app, [*args, "json"])
    assert result.exit_code == 0, result.stderr
    # Crawl-delay is not in RFC 9309 (common practice, no published source); the file names 2.5.
    assert json.loads(result.stdout)["crawl_delay"] == {str(saved): 2.5}
