"""Person keys: one normalized text per person, so that "Last, First" and "First Last" agree.

The key of a name is lower-case ASCII words separated by single spaces, given names first,
then the family name with its particles in their order, then a generational suffix:

    "Smith, John Jr."   → "john smith jr"        "Jörg Ødegård" → "jorg odegard"
    "van der Berg, Jan" → "jan van der berg"     "O'Neil, Séan" → "sean oneil"
    "Jean-Luc  PICARD"  → "jean luc picard"      "St. John, A.J." → "a j st john"

Steps: Unicode compatibility decomposition (NFKD, UAX #15) with the combining marks dropped,
then a transliteration to ASCII for letters that do not decompose (ø, ł, æ, ß, …; the anyascii
library's tables, not ours); apostrophes (' ’ ʼ) removed; periods, hyphens, other
punctuation and runs of white space made one space (so "A.J." and "A. J." agree); case
folded. One comma splits "Last, First" (a second comma sets off a suffix: "Smith, John,
Jr."). Suffixes Jr, Sr, II, III, IV and V are kept, at the end, so "John Smith" and "John
Smith Jr." stay two people. The key of a key is itself. Name conventions here are common
practice, no published source.
"""

from __future__ import annotations

import re
import unicodedata

import pyarrow as pa
from anyascii import anyascii

from harvester.errors import ExtractError
from harvester.extract.arrays import from_values
from harvester.extract.rules import ColumnRule

__all__ = [
    "SUFFIXES",
    "code_names",
    "key_column",
    "name_column",
    "person_key",
    "person_keys",
]

SUFFIXES = frozenset({"jr", "sr", "ii", "iii", "iv", "v"})
_APOSTROPHES = re.compile(r"['\u2019\u02bc\u2018`´]")
_NOT_WORD = re.compile(r"[^a-z0-9]+")


def _words(text: str) -> list[str]:
    """The plain ASCII lower-case words of ``text`` (no commas: call per comma part)."""
    decomposed = unicodedata.normalize("NFKD", text)
    stripped = "".join(c for c in decomposed if unicodedata.category(c) != "Mn")
    ascii_text = anyascii(stripped).lower()
    ascii_text = _APOSTROPHES.sub("", ascii_text)  # "O'Neil" is one word; "A.J." two
    return [word for word in _NOT_WORD.split(ascii_text) if word]


def person_key(name: str | None) -> str | None:
    """The person key of ``name`` (see the module docstring); None for no name at all."""
    if name is None:
        return None
    parts = [_words(part) for part in name.split(",")]
    parts = [part for part in parts if part]
    if not parts:
        return None
    suffix: list[str] = []
    if len(parts) >= 3 and all(word in SUFFIXES for word in parts[-1]):
        suffix = parts.pop()  # "Smith, John, Jr."
    if len(parts) >= 2:
        family, given = parts[0], [word for part in parts[1:] for word in part]
        words = [*given, *family]  # "Last, First" → "First Last"
    else:
        words = parts[0]
    # A suffix anywhere but first goes to the end: "Smith Jr., John" → "john smith jr".
    kept = [word for index, word in enumerate(words) if not (index and word in SUFFIXES)]
    suffix = [word for index, word in enumerate(words) if index and word in SUFFIXES] + suffix
    return " ".join([*kept, *suffix])


def key_column(name: str) -> str:
    """The name of the key column a ``person_key`` column adds: ``<name>_key``."""
    return f"{name}_key"


def person_keys(
    values: pa.Array, name: str, *, where: str, aliases: tuple[tuple[str, str], ...] = ()
) -> pa.Array:
    """The person keys of a text column's values (null stays null); a key that ``aliases``
    names (a known variant, normalized) becomes its canonical key."""
    if not pa.types.is_string(values.type) and not pa.types.is_large_string(values.type):
        raise ExtractError(
            f"{where}: column {name!r} has person_key = true but holds {values.type}, not text",
            hint=f'declare {name} = {{ type = "text", person_key = true }}',
        )
    canonical = dict(aliases)
    keys = [person_key(value) for value in values.to_pylist()]
    return from_values([canonical.get(key, key) if key else key for key in keys], pa.string())


def name_column(name: str) -> str:
    """The name of the column a ``codes`` column adds: ``<name>_name``."""
    return f"{name}_name"


def code_names(values: pa.Array, rule: ColumnRule) -> tuple[pa.Array, str]:
    """The canonical name of each code (null for a null cell), and a note naming the codes
    the file does not list ('' when none): their rows' names are null, and said to be."""
    names = dict(rule.code_names)
    found: list[str | None] = []
    unknown: dict[str, int] = {}
    for value in values.to_pylist():
        if value is None:
            found.append(None)
            continue
        code = str(value).strip()
        found.append(names.get(code))
        if code not in names:
            unknown[code] = unknown.get(code, 0) + 1
    note = ""
    if unknown:
        listed = ", ".join(f"{code!r} ({count} row{'s' * (count > 1)})" for code, count
                           in sorted(unknown.items()))  # fmt: skip
        note = (
            f"column {rule.name!r}: {len(unknown)} code(s) not in {rule.codes}: {listed};"
            f" their {name_column(rule.name)} is null — add them to {rule.codes}"
        )
    return from_values(found, pa.string()), note
