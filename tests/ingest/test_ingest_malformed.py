"""The malformed-file corpus: each file is rejected with one line naming file,
physical line and column (``tests/ingest/malformed/``, files named after their quirk)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from logbook.errors import InputError
from logbook.ingest import read_table, trace_from_table

MALFORMED = Path(__file__).parent / "malformed"

# file name -> (line, column, start of the reason); None where it does not apply.
CASES: dict[str, tuple[int | None, str | None, str]] = {
    "truncated_row.csv": (5, "position [mm]", "truncated row: 2 of 3 fields"),
    "truncated_row_crlf.csv": (3, "position [mm]", "truncated row: 2 of 3 fields"),
    "truncated_last_row.csv": (5, "setpoint [mm]", "truncated row: 1 of 3 fields"),
    "text_in_numeric.csv": (4, "setpoint [mm]", "text 'abc' in a numeric column"),
    "text_in_time_after_metadata.csv": (7, "t [s]", "text 'soon' in a numeric column"),
    "trailing_total_line.csv": (7, "t [s]", "text 'total' in a numeric column"),
    "hex_value.csv": (3, "setpoint [mm]", "text '0x1F' in a numeric column"),
    "thousands_separator.csv": (4, "t [ms]", "text '1 000' in a numeric column"),
    "duplicate_header.csv": (1, "position [mm]", "duplicate header name"),
    "empty_header_name.csv": (1, "#2", "the header name in position 2 is empty"),
    "missing_header_row.csv": (1, None, "missing header row"),
    "empty_file.csv": (None, None, "empty file"),
    "only_comments.csv": (3, None, "no header row"),
    "header_only.csv": (3, None, "no data rows after the header"),
    "binary_junk.csv": (1, None, "binary data (NUL bytes)"),
    "binary_junk_after_header.csv": (3, None, "not UTF-8 text"),
    "latin1_header.csv": (1, None, "not UTF-8 text"),
    "wrong_delimiter.csv": (1, None, "only one column found"),
    "single_column.csv": (1, None, "only one column found"),
    "mixed_decimal_marks.csv": (3, "position [mm]", "mixed decimal marks"),
    "mixed_decimal_marks_late.csv": (62, "position [mm]", "mixed decimal marks: '0.60'"),
    "decimal_comma_in_comma_file.csv": (2, None, "too many fields: 5, the header has 3"),
    "too_many_fields.csv": (3, None, "too many fields: 4, the header has 3"),
    "empty_cell.csv": (4, "setpoint [mm]", "empty cell"),
    "blank_line_inside.csv": (4, None, "blank line inside the data"),
    "unbalanced_quote.csv": (3, None, "unbalanced quote"),
    "bare_carriage_return.csv": (3, None, "carriage return inside a line"),
    "infinite_value.csv": (4, "position [mm]", "absurd value inf"),
    "absurd_magnitude.csv": (4, "position [mm]", "absurd value 3500000000000000.0"),
    "non_monotonic_time.csv": (5, "t [s]", "time goes backwards: 0.002 after 0.003"),
    "duplicate_timestamp.csv": (4, "t [s]", "duplicate timestamp: 0.001 after 0.001"),
    "nan_in_used_column.csv": (4, "position [mm]", "missing value (NaN) in a used column"),
    "missing_feedback_column.csv": (1, None, "no feedback column found by name"),
    "too_few_rows.csv": (None, None, "only 2 data rows; at least 3 are needed"),
    "duplicate_metadata_key.csv": (3, None, "metadata key 'operator' is given twice"),
    "time_unit_unknown.csv": (None, "t [min]", "time unit 'min' is not one of s, ms, us"),
}


def expected_message(path: Path, line: int | None, column: str | None, reason: str) -> str:
    where = [str(path)]
    if line is not None:
        where.append(f"line {line}")
    if column is not None:
        where.append(f"column '{column}'")
    return "^" + re.escape(f"{', '.join(where)}: {reason}")


def test_corpus_has_at_least_25_files_and_each_is_listed() -> None:
    files = {p.name for p in MALFORMED.iterdir()}
    assert len(files) >= 25
    assert files == set(CASES)


@pytest.mark.parametrize("name", sorted(CASES))
def test_malformed_file_is_rejected_with_its_location(name: str) -> None:
    path = MALFORMED / name
    line, column, reason = CASES[name]
    with pytest.raises(InputError, match=expected_message(path, line, column, reason)) as info:
        trace_from_table(read_table(path))
    assert (info.value.file, info.value.line, info.value.column) == (str(path), line, column)
    assert "\n" not in str(info.value)  # one line, for the batch report
