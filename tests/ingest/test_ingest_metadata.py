"""Typed run fields from '# key: value' lines, and the CLI-wins merge."""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import pytest

from logbook.errors import InputError
from logbook.ingest import read_table
from logbook.ingest.metadata import RunFields, merge_run_fields, parse_run_fields

GOOD = Path(__file__).parent / "good"


def test_metadata_header_becomes_typed_fields() -> None:
    fields = parse_run_fields(read_table(GOOD / "metadata_header.csv").metadata)
    assert fields == RunFields(
        operator="R. Okafor",
        date=datetime(2024, 3, 5, 13, 30, tzinfo=UTC),  # 14:30 at +01:00 is 13:30 UTC
        supply_voltage_v=24.0,
        temperature_c=22.5,
        load_value=0.5,
        load_unit="kg",
        revision="B",
        gains="soft-start",
        axis="x-stage",
        test_kind="position_step",
        notes="after belt re-tension",
    )
    assert fields.date is not None and fields.date.utcoffset() is not None


def test_unknown_keys_are_kept_as_extra_and_blank_values_ignored() -> None:
    fields = parse_run_fields({"fixture": "jig 3", "operator": "  ", "date": "2024-01-02T03:04Z"})
    assert fields.extra == {"fixture": "jig 3"}
    assert fields.operator is None
    assert fields.date == datetime(2024, 1, 2, 3, 4, tzinfo=UTC)


def test_load_without_unit_and_negative_temperature() -> None:
    fields = parse_run_fields({"load": "2", "temperature_c": "-5.5"})
    assert (fields.load_value, fields.load_unit, fields.temperature_c) == (2.0, None, -5.5)


@pytest.mark.parametrize(
    ("metadata", "message"),
    [
        (
            {"date": "2024-03-05T14:30:00"},
            "metadata 'date': '2024-03-05T14:30:00' has no UTC offset",
        ),
        ({"date": "yesterday"}, "metadata 'date': 'yesterday' is not an ISO 8601 date-time"),
        ({"supply_voltage_v": "24 V"}, "metadata 'supply_voltage_v': '24 V' is not a number"),
        ({"temperature_c": "inf"}, "metadata 'temperature_c': 'inf' is not a finite number"),
        ({"load": "heavy"}, "metadata 'load': 'heavy' is not a number with its unit"),
    ],
)
def test_bad_metadata_values_name_the_key(metadata: dict[str, str], message: str) -> None:
    with pytest.raises(InputError, match="^run.csv: " + message):
        parse_run_fields(metadata, file="run.csv")


def test_command_line_wins_and_each_conflict_is_reported() -> None:
    from_file = RunFields(
        operator="R. Okafor", revision="B", temperature_c=22.5, extra={"fixture": "jig 3"}
    )
    from_cli = RunFields(operator="J. Lindqvist", revision="B", gains="stiff")
    merged, conflicts = merge_run_fields(from_file, from_cli)
    assert merged == RunFields(
        operator="J. Lindqvist",
        revision="B",
        gains="stiff",
        temperature_c=22.5,
        extra={"fixture": "jig 3"},
    )
    assert conflicts == [
        "operator: the command line gives 'J. Lindqvist', the file 'R. Okafor'; "
        "using 'J. Lindqvist'"
    ]


def test_zero_is_a_value_not_an_absence() -> None:
    merged, conflicts = merge_run_fields(RunFields(temperature_c=0.0), RunFields())
    assert merged.temperature_c == 0.0 and conflicts == []
    merged, conflicts = merge_run_fields(
        RunFields(temperature_c=21.0), RunFields(temperature_c=0.0)
    )
    assert merged.temperature_c == 0.0 and len(conflicts) == 1
