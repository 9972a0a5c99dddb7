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

__all__ = ["SUFFIXES", "key_column", "person_key", "person_keys"]

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


def person_keys(values: pa.Array, name: str, *, where: str) -> pa.Array:
    """The person keys of a text column's values (null stays null)."""
    if not pa.types.is_string(values.type) and not pa.types.is_large_string(values.type):
        raise ExtractError(
            f"{where}: column {name!r} has person_key = true but holds {values.type}, not text",
            hint=f'declare {name} = {{ type = "text", person_key = true }}',
        )
    return pa.array([person_key(value) for value in values.to_pylist()], type=pa.string())
