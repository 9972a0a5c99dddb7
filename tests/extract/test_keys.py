"""Person keys (harvester.extract.keys): worked examples, properties, and the key column.

Letters are folded as Unicode's compatibility decomposition gives them (UAX #15, NFKD: "é" is
"e" + U+0301, whose mark is dropped); the letters that do not decompose (ø, ł, æ, ß) follow the
anyascii library's transliteration, checked against that library itself. Name-order, particle
and suffix conventions are common practice, no published source.
"""

from __future__ import annotations

import unicodedata

import pytest
from anyascii import anyascii
from hypothesis import given
from hypothesis import strategies as st

from harvester.errors import ExtractError
from harvester.extract.keys import SUFFIXES, person_key
from harvester.extract.rules import ColumnRule, TableRule
from harvester.extract.table import extract_table, read_page


@pytest.mark.parametrize(
    ("name", "key"),
    [
        ("Smith, John", "john smith"),  # "Last, First" → "First Last"
        ("John Smith", "john smith"),
        ("  JOHN   smith ", "john smith"),  # case and runs of spaces
        ("Smith, John Jr.", "john smith jr"),  # suffixes kept, at the end
        ("John Smith Jr.", "john smith jr"),
        ("Smith Jr., John", "john smith jr"),
        ("Smith, John, Jr.", "john smith jr"),
        ("John Smith III", "john smith iii"),
        ("van der Berg, Jan", "jan van der berg"),  # particles kept in order
        ("Jan van der Berg", "jan van der berg"),
        ("de la Cruz, María", "maria de la cruz"),
        ("St. John, A.J.", "a j st john"),  # periods: "A.J." and "A. J." agree
        ("A. J. St. John", "a j st john"),
        ("O'Neil, Seán", "sean oneil"),  # apostrophes ' and ’ removed
        ("Seán O\u2019Neil", "sean oneil"),
        ("Jean-Luc Picard", "jean luc picard"),  # hyphens as spaces
    ],
)
def test_worked_examples(name: str, key: str) -> None:
    assert person_key(name) == key


def test_accents_fold_as_nfkd_decomposes_them() -> None:
    # UAX #15: NFKD of "é" is "e" followed by COMBINING ACUTE ACCENT (a mark, category Mn).
    assert unicodedata.normalize("NFKD", "é") == "e\u0301"
    assert person_key("Renée Åberg") == "renee aberg"
    # Full-width letters are compatibility forms (NFKD maps them to ASCII).
    assert person_key("\uff2a\uff4f\uff48\uff4e Smith") == "john smith"


@pytest.mark.parametrize("letter", ["ø", "ł", "æ", "ß", "Ø", "Æ", "đ", "þ"])
def test_letters_that_do_not_decompose_follow_the_transliteration_library(letter: str) -> None:
    # These letters have no decomposition in UAX #15 terms: NFKD leaves them as they are.
    assert unicodedata.normalize("NFKD", letter) == letter
    assert person_key(f"Ana {letter}rsted") == f"ana {anyascii(letter).lower()}rsted"


def test_no_name_is_no_key() -> None:
    assert person_key(None) is None
    assert person_key("") is None
    assert person_key(" , . ") is None


def test_a_suffix_keeps_two_people_apart() -> None:
    assert person_key("John Smith") != person_key("John Smith Jr.")
    assert person_key("John Smith Sr.") != person_key("John Smith Jr.")


LETTERS = "abcdefghijklmnoprstuvwyzéèüöøåæłßñç"
names = st.text(alphabet=LETTERS, min_size=1, max_size=8).filter(lambda w: w not in SUFFIXES)
parts = st.lists(names, min_size=1, max_size=3)


@given(given=parts, family=parts)
def test_last_comma_first_and_first_last_give_one_key(given: list[str], family: list[str]) -> None:
    first_last = " ".join([*given, *family])
    last_first = f"{' '.join(family)}, {' '.join(given)}"
    assert person_key(first_last) == person_key(last_first)


@given(st.text(max_size=40))
def test_the_key_of_a_key_is_itself(name: str) -> None:
    key = person_key(name)
    assert person_key(key) == key
    if key is not None:
        assert key == key.strip() and "  " not in key and key.isascii() and key.lower() == key


def test_a_person_key_column_is_added_beside_its_column() -> None:
    html = (
        "<table><tr><th>Player</th><th>Club</th></tr>"
        "<tr><td>Ødegård, Jörg</td><td>OSK</td></tr><tr><td>—</td><td>VRE</td></tr></table>"
    )
    rule = TableRule(
        select="table", columns=(ColumnRule(name="player", type="text", person_key=True),)
    )
    table = extract_table(read_page(html), rule).table
    assert table.column_names == ["player", "player_key", "club"]
    assert table.column("player_key").to_pylist() == ["jorg odegard", None]  # "—" is null


def test_a_key_column_that_clashes_or_a_column_that_is_not_text_is_one_line() -> None:
    html = "<table><tr><th>Player</th><th>Player_key</th></tr><tr><td>a</td><td>b</td></tr></table>"
    rule = TableRule(select="table", columns=(ColumnRule(name="player", person_key=True),))
    with pytest.raises(ExtractError, match="new column 'player_key' clashes"):
        extract_table(read_page(html), rule)
    numbers = "<table><tr><th>Goals</th></tr><tr><td>3</td></tr></table>"
    rule = TableRule(select="table", columns=(ColumnRule(name="goals", person_key=True),))
    with pytest.raises(ExtractError, match="person_key = true but holds int64, not text"):
        extract_table(read_page(numbers), rule)
