"""The invented vocabulary of the demo league: names of towns, clubs and people from syllables.

Syllables are chosen to sound plausible without spelling real places or people; each name is
drawn from the ``random.Random`` it is given, so a seeded generator always draws the same names.
"""

from __future__ import annotations

import random

__all__ = ["club_name", "person_name", "town_name"]

_TOWN_HEADS = ("Vrel", "Osk", "Quen", "Thar", "Mib", "Dask", "Yol", "Zen", "Brak", "Hurn", "Sveld")
_TOWN_TAILS = ("mark", "vik", "usk", "ovo", "ane", "ith", "orra", "emby", "aldt", "ingue")
_CLUB_PATTERNS = ("HC {}", "{} Handball", "{} HC", "Handball {}")
_FIRST_HEADS = ("Ka", "Ve", "Lo", "Mi", "Da", "Ro", "Se", "Ti", "Bo", "Ne", "Jo", "Fa", "Ul")
_FIRST_TAILS = ("ren", "lis", "vo", "dan", "mir", "tek", "sa", "nor", "bel", "quin", "rik")
_LAST_HEADS = ("Vor", "Kel", "Dra", "Mun", "Sil", "Tav", "Bre", "Osk", "Hal", "Zem", "Pry")
_LAST_MIDS = ("ne", "ka", "lo", "ri", "va", "du", "")
_LAST_TAILS = ("vik", "dar", "strom", "mek", "lund", "sen", "ard", "ovic", "berk")


def town_name(rng: random.Random) -> str:
    """A town: a head syllable and a tail ("Vrel" + "mark")."""
    return rng.choice(_TOWN_HEADS) + rng.choice(_TOWN_TAILS)


def club_name(rng: random.Random, town: str) -> str:
    """A club of ``town``, in one of the usual patterns ("HC Vrelmark", "Vrelmark Handball")."""
    return rng.choice(_CLUB_PATTERNS).format(town)


def person_name(rng: random.Random) -> tuple[str, str]:
    """A first name of two syllables and a last name of two or three (first, last)."""
    first = rng.choice(_FIRST_HEADS) + rng.choice(_FIRST_TAILS)
    last = rng.choice(_LAST_HEADS) + rng.choice(_LAST_MIDS) + rng.choice(_LAST_TAILS)
    return first, last
