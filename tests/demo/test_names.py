"""Tests for the league's invented vocabulary: names are built from the syllables, in order.

A stand-in random generator always picks the first (or last) entry, so the expected names can be
read off the syllable lists in harvester/demo/names.py by hand.
"""

from __future__ import annotations

import random
import re
from typing import TYPE_CHECKING, TypeVar

from harvester.demo.names import club_name, person_name, town_name

if TYPE_CHECKING:
    from _typeshed import SupportsLenAndGetItem  # the type random.Random.choice takes

T = TypeVar("T")


class Picks(random.Random):
    """A generator whose ``choice`` always takes the entry at ``index`` (0 first, -1 last)."""

    def __init__(self, index: int) -> None:
        super().__init__(0)
        self.index = index

    def choice(self, seq: SupportsLenAndGetItem[T]) -> T:
        return seq[self.index % len(seq)]


def test_first_syllables_make_the_first_names() -> None:
    first = Picks(0)
    assert town_name(first) == "Vrelmark"  # "Vrel" + "mark"
    assert club_name(first, "Vrelmark") == "HC Vrelmark"
    assert person_name(first) == ("Karen", "Vornevik")  # "Ka" + "ren", "Vor" + "ne" + "vik"


def test_last_syllables_make_the_last_names() -> None:
    last = Picks(-1)
    assert town_name(last) == "Sveldingue"
    assert club_name(last, "Osk") == "Handball Osk"
    assert person_name(last) == ("Ulrik", "Pryberk")  # the empty middle syllable


def test_drawn_names_are_capitalised_words() -> None:
    rng = random.Random(2026)
    for _ in range(200):
        first, last = person_name(rng)
        assert re.fullmatch(r"[A-Z][a-z]+", first) and re.fullmatch(r"[A-Z][a-z]+", last)
        town = town_name(rng)
        assert re.fullmatch(r"[A-Z][a-z]{2,}", town)  # club codes take its first three letters
        assert town in club_name(rng, town)
