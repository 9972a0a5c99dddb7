"""The ``[captures]`` section: which web archive past pages come from, and which capture to take.

A recipe's ``[captures]`` is read key by key over the user config's ``[captures]`` (the
recipe's keys win), so one archive configured once serves every recipe. Templates must be
http(s) URLs holding ``{url}``; ``original``'s pattern must compile and its replacement may
name only the pattern's groups.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any
from urllib.parse import urlsplit

from harvester.config import config_path, config_table
from harvester.errors import RecipeError
from harvester.fetch.capture_choice import CHOICE_RULES, parse_window
from harvester.fetch.web_archive import URL_PLACEHOLDER, OriginalRewrite, WebArchive
from harvester.recipe.readers import Reader, Where, choice, regex, show, text
from harvester.recipe.schema import read_section

__all__ = ["CAPTURES_HOME", "archive_from_options", "read_captures"]

CAPTURES_HOME = "[captures]"
_TIMEMAP_EXAMPLE = '"https://archive.example.net/timemap/{url}"'
_GROUP_REFERENCE = re.compile(r"\\(?:g<([^>]*)>|([0-9]{1,2}))")


def _template(example: str) -> Reader:
    read_text = text(example, required=True)

    def read(value: object, where: Where) -> str:
        template: str = read_text(value, where)
        if URL_PLACEHOLDER not in template:
            where.fail(
                f"has no {URL_PLACEHOLDER} placeholder: {show(template)}",
                f"write {URL_PLACEHOLDER} where the page's own URL goes, e.g. {example}",
            )
        rest = template.replace(URL_PLACEHOLDER, "")
        if "{" in rest or "}" in rest:
            where.fail(
                f"has a placeholder other than {URL_PLACEHOLDER}: {show(template)}",
                f"{URL_PLACEHOLDER} is the only placeholder here",
            )
        parts = urlsplit(template.replace(URL_PLACEHOLDER, "x"))
        if parts.scheme not in ("http", "https") or not parts.hostname:
            where.fail(f"is not an http(s) URL with a host: {show(template)}", f"e.g. {example}")
        return template

    return read


def _original(value: object, where: Where) -> OriginalRewrite:
    """``{ pattern = "REGEX", replace = "REPLACEMENT" }``, the replacement checked now."""
    example = "{ pattern = '/(\\d{14})/', replace = '/\\1id/' }"
    readers = {"pattern": regex("'/(\\d{14})/'"), "replace": text("'/\\1id/'")}
    required = {"pattern": "pattern = '/(\\d{14})/'", "replace": "replace = '/\\1id/'"}
    found = read_section(value, where, readers, home=where.key, example=example, required=required)
    compiled = re.compile(found["pattern"])
    for match in _GROUP_REFERENCE.finditer(found["replace"]):
        name, number = match.groups()
        group = name if name is not None else number
        known = (group.isdigit() and int(group) <= compiled.groups) or group in compiled.groupindex
        if not known:
            where.at("replace").fail(
                f"refers to group {group!r}, which the pattern does not have",
                f"the pattern has {compiled.groups} group(s); use \\1 … or name one with (?P<x>…)",
            )
    try:
        compiled.sub(found["replace"], "")  # any other template error shows here
    except (re.error, IndexError) as exc:
        where.at("replace").fail(f"is not a valid replacement: {exc}", "write \\1 for group 1")
    return OriginalRewrite(found["pattern"], found["replace"])


def _window(value: object, where: Where) -> Any:
    written: str = text('"120d"', required=True)(value, where)
    try:
        return parse_window(written)
    except ValueError as exc:
        where.fail(str(exc), 'write a whole number of days, hours or weeks: "120d", "36h", "2w"')


CAPTURES_READERS: dict[str, Reader] = {
    "timemap": _template(_TIMEMAP_EXAMPLE),
    "timegate": _template('"https://archive.example.net/timegate/{url}"'),
    "original": _original,
    "rule": choice(CHOICE_RULES),
    "within": _window,
}


def read_captures(
    value: object, where: Where, defaults: tuple[Mapping[str, object], Where] | None = None
) -> WebArchive | None:
    """The web archive a recipe uses: its ``[captures]`` over the user config's, or None."""
    found: dict[str, Any] = {}
    if defaults is not None:
        config, config_where = defaults
        found.update(read_section(config, config_where, CAPTURES_READERS, home=CAPTURES_HOME))
    if value is not None:
        found.update(read_section(value, where, CAPTURES_READERS, home=CAPTURES_HOME))
    if not found:
        return None
    if "timemap" not in found and "timegate" not in found:
        where.at("timemap").fail(
            "missing: [captures] needs a timemap or a timegate template",
            f"add timemap = {_TIMEMAP_EXAMPLE} under {CAPTURES_HOME}",
        )
    return WebArchive(**found)


def archive_from_options(
    timemap: str | None, timegate: str | None, rule: str | None, within: str | None
) -> WebArchive:
    """The archive a command names by options, over the user config's ``[captures]``.

    With ``--timemap`` or ``--timegate`` the config's templates are not used; its ``original``,
    ``rule`` and ``within`` still are, unless given.
    """
    given = {"timemap": timemap, "timegate": timegate, "rule": rule, "within": within}
    options = {key: value for key, value in given.items() if value is not None}
    config = config_table("captures")
    defaults = None
    if config is not None:
        kept = dict(config)
        if timemap is not None or timegate is not None:
            kept.pop("timemap", None)
            kept.pop("timegate", None)
        defaults = (kept, Where(str(config_path()), "captures"))
    archive = read_captures(options, Where("harvester captures"), defaults)
    if archive is None:
        raise RecipeError(
            "no web archive: give --timemap TEMPLATE (or --timegate), or set [captures] in"
            f" the user config {config_path()}",
            hint='e.g. --timemap "https://archive.example.net/timemap/{url}"',
        )
    return archive
