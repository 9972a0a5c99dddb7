"""The archive contract: the footer's provenance object is read once, and damage is named."""

from __future__ import annotations

import pytest

from harvester.errors import StoreError
from harvester.store.contract import DAMAGED_HINT, data_columns, read_provenance, recorded_key

FILE = "archive/tables/d/t/version=1/part-0.parquet"


def test_a_footer_without_provenance_reads_as_empty() -> None:
    assert read_provenance({}, FILE) == {}
    assert recorded_key(None, FILE) == ()


def test_the_recorded_key_is_read_from_the_provenance_json() -> None:
    footer = {b"harvester.provenance": b'{"key": ["player_id"], "rows": 3}'}
    assert recorded_key(footer, FILE) == ("player_id",)


@pytest.mark.parametrize(
    ("raw", "problem"),
    [
        (b"{not json", "is not JSON"),
        (b"\xff\xfe", "is not JSON"),  # not UTF-8 either (RFC 8259 §8.1: JSON text is UTF-8)
        (b"[1, 2]", "is not a JSON object"),
    ],
)
def test_a_damaged_provenance_names_the_file_and_what_to_do(raw: bytes, problem: str) -> None:
    with pytest.raises(StoreError) as caught:
        read_provenance({b"harvester.provenance": raw}, FILE)
    assert str(caught.value).startswith(f"{FILE}: harvester.provenance in the footer {problem}")
    assert caught.value.hint == DAMAGED_HINT


def test_a_key_that_is_not_a_list_of_names_is_damage() -> None:
    with pytest.raises(StoreError, match='"key" is not a list of column names'):
        recorded_key({b"harvester.provenance": b'{"key": "player_id"}'}, FILE)


def test_data_columns_are_those_without_a_leading_underscore() -> None:
    import pyarrow as pa

    table = pa.table({"player": ["a"], "_source_url": ["u"], "goals": [1]})
    assert data_columns(table) == ["player", "goals"]
    assert data_columns(table.schema) == ["player", "goals"]
