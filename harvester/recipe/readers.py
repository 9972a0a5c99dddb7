"""The pieces every recipe check is made of: a place in the file, and readers of single values.

A ``Reader`` takes a TOML value and a ``Where`` (file + dotted key path) and returns the value in
the form the dataclasses want (lists become tuples), or raises a one-line RecipeError at the
first problem, naming the place and what to write instead.
"""

from __future__ import annotations

import difflib
import json
import math
import re
import typing
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import date, datetime, time
from typing import Any, NoReturn

from selectolax.lexbor import LexborHTMLParser, SelectolaxError

from harvester.errors import RecipeError

__all__ = [
    "Reader",
    "Where",
    "boolean",
    "choice",
    "integer",
    "literal_options",
    "number",
    "regex",
    "selector",
    "show",
    "suggest",
    "text",
    "text_list",
]

Reader = Callable[[object, "Where"], Any]

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")  # TOML v1.0.0 "Keys": bare keys need no quotes


@dataclass(frozen=True)
class Where:
    """A place in a recipe file: the file as the user named it and a dotted TOML key path."""

    path: str
    key: str = ""
    leaf: str = ""  # the last key name, for hints such as "write header_rows = 2"

    def at(self, name: str) -> Where:
        """The place of key ``name`` inside this table (quoted when TOML would need quotes)."""
        part = name if _BARE_KEY.fullmatch(name) else json.dumps(name, ensure_ascii=False)
        return Where(self.path, f"{self.key}.{part}" if self.key else part, name)

    def item(self, index: int) -> Where:
        """The place of element ``index`` of the list at this place."""
        return Where(self.path, f"{self.key}[{index}]", self.leaf)

    def fail(self, message: str, hint: str = "") -> NoReturn:
        """Raise the RecipeError for this place."""
        raise RecipeError(message, path=self.path, key=self.key, hint=hint)

    def expected(self, what: str, value: object, example: str) -> NoReturn:
        """Raise 'must be WHAT, got VALUE — write KEY = EXAMPLE' for this place."""
        self.fail(f"must be {what}, got {show(value)}", f"write {self.leaf} = {example}")


def show(value: object) -> str:
    """Render a TOML value the way the user wrote it, shortened to keep messages on one line."""
    if isinstance(value, bool):
        shown = "true" if value else "false"
    elif isinstance(value, str):
        shown = json.dumps(value, ensure_ascii=False)
    elif isinstance(value, list):
        shown = "[" + ", ".join(show(item) for item in value) + "]"
    elif isinstance(value, dict):
        shown = "{ " + ", ".join(f"{key} = {show(item)}" for key, item in value.items()) + " }"
    elif isinstance(value, datetime | date | time):
        shown = value.isoformat()  # a TOML date/time literal, written without quotes
    else:
        shown = repr(value)  # int and float; repr gives TOML's own inf and nan
    shown = " ".join(shown.split())
    return shown if len(shown) <= 60 else shown[:59] + "…"


def suggest(word: object, options: Sequence[str]) -> str:
    """A 'did you mean' hint for ``word`` among ``options``, or '' when nothing is close."""
    if not isinstance(word, str):
        return ""
    lowered = {option.lower(): option for option in options}
    close = difflib.get_close_matches(word.lower(), list(lowered), n=1)
    return f"did you mean {json.dumps(lowered[close[0]], ensure_ascii=False)}?" if close else ""


def literal_options(owner: type, name: str) -> tuple[str, ...]:
    """The allowed strings of a Literal-typed dataclass field, so rules.py stays the one source."""
    hint = typing.get_type_hints(owner)[name]
    return tuple(arg for arg in typing.get_args(hint) if isinstance(arg, str))


def text(example: str, *, required: bool = False) -> Reader:
    """A string; ``required`` also refuses the empty string."""

    def read(value: object, where: Where) -> str:
        if not isinstance(value, str) or (required and not value):
            where.expected(f"{'non-empty ' if required else ''}text in quotes", value, example)
        return value

    return read


def integer(example: str, *, minimum: int | None = None) -> Reader:
    """A TOML integer (never a boolean or a float), at least ``minimum`` when given."""

    def read(value: object, where: Where) -> int:
        if (
            isinstance(value, bool)
            or not isinstance(value, int)
            or (minimum is not None and value < minimum)
        ):
            bound = "" if minimum is None else f" >= {minimum}"
            where.expected(f"an integer{bound}", value, example)
        return value

    return read


def number(example: str, *, maximum: float | None = None, positive: bool = False) -> Reader:
    """A finite integer or float >= 0 (> 0 when ``positive``), at most ``maximum``; a float."""

    def read(value: object, where: Where) -> float:
        bound = "> 0" if positive else ">= 0"
        if maximum is not None:
            bound += f" and <= {maximum:g}"
        if (
            isinstance(value, bool)
            or not isinstance(value, int | float)
            or not math.isfinite(value)
            or value < 0
            or (positive and value == 0)
            or (maximum is not None and value > maximum)
        ):
            where.expected(f"a number {bound}", value, example)
        return float(value)

    return read


def boolean(value: object, where: Where) -> bool:
    """A TOML boolean, written true or false without quotes."""
    if not isinstance(value, bool):
        where.expected("true or false", value, "true")
    return value


def choice(options: Sequence[str]) -> Reader:
    """One of the strings ``options``."""

    def read(value: object, where: Where) -> str:
        if isinstance(value, str) and value in options:
            return value
        listed = ", ".join(json.dumps(option, ensure_ascii=False) for option in options)
        hint = suggest(value, options) or f"write {where.leaf} = {json.dumps(options[0])}"
        where.fail(f"must be one of {listed}, got {show(value)}", hint)

    return read


def text_list(example: str, *, required: bool = False, unique: bool = False) -> Reader:
    """A list of strings, returned as a tuple; ``required`` refuses empty strings in it."""
    item_reader = text(example, required=required)

    def read(value: object, where: Where) -> tuple[str, ...]:
        if not isinstance(value, list):
            where.expected("a list of text", value, example)
        items: list[str] = []
        for index, item in enumerate(value):
            items.append(item_reader(item, where.item(index)))
            if unique and items[-1] in items[:-1]:
                where.item(index).fail(f"repeats {show(item)}", "list each name once")
        return tuple(items)

    return read


def regex(example: str) -> Reader:
    """A Python regular expression that compiles."""
    read_text = text(example, required=True)

    def read(value: object, where: Where) -> str:
        pattern: str = read_text(value, where)
        try:
            re.compile(pattern)
        except re.error as exc:
            where.fail(
                f"is not a valid regular expression: {exc.msg} at position {exc.pos}",
                "check brackets and escapes; in '...' quotes a backslash needs no doubling",
            )
        return pattern

    return read


def selector(value: object, where: Where) -> str:
    """A CSS selector the HTML parser (lexbor, via selectolax) accepts."""
    css: str = text('"table#players"', required=True)(value, where)
    try:
        LexborHTMLParser("<p></p>").css(css)
    except SelectolaxError:
        where.fail(f"is not a CSS selector the parser can read: {show(css)}", "e.g. table#players")
    return css
