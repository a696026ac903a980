"""Readable layouts: TSV, decimal comma, BOM, quoted headers, metadata, Parquet."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from logbook.errors import InputError
from logbook.ingest import read_table

GOOD = Path(__file__).parent / "good"


def test_tab_separated_file_is_sniffed() -> None:
    table = read_table(GOOD / "tab_separated.tsv")
    assert list(table.columns) == ["t [s]", "setpoint [mm]", "position [mm]", "effort [V]"]
    np.testing.assert_array_equal(table.columns["effort [V]"], [0.0, 4.8, 3.9, 2.2])
    assert table.first_data_line == 2


def test_decimal_comma_with_semicolons_is_sniffed() -> None:
    table = read_table(GOOD / "decimal_comma_semicolon.csv")
    np.testing.assert_array_equal(table.columns["t [s]"], [0.0, 0.02, 0.04, 0.06])
    np.testing.assert_array_equal(table.columns["angle [deg]"], [0.0, 3.5, 21.25, 44.1])


def test_explicit_delimiter_and_decimal_agree_with_sniffing() -> None:
    sniffed = read_table(GOOD / "decimal_comma_semicolon.csv")
    given = read_table(GOOD / "decimal_comma_semicolon.csv", delimiter=";", decimal=",")
    for name, values in sniffed.columns.items():
        np.testing.assert_array_equal(given.columns[name], values)


def test_byte_order_mark_is_not_part_of_the_first_header() -> None:
    table = read_table(GOOD / "utf8_bom.csv")
    assert list(table.columns)[0] == "t [s]"


def test_quoted_headers_keep_commas_and_units() -> None:
    table = read_table(GOOD / "quoted_headers.csv")
    assert list(table.columns) == ["t [s]", "Set Point [mm]", "Position, filtered [mm]"]


def test_metadata_lines_become_lower_cased_keys_and_shift_the_data_line() -> None:
    table = read_table(GOOD / "metadata_header.csv")
    assert table.metadata["axis"] == "x-stage"
    assert table.metadata["load"] == "0.50 kg"
    assert table.metadata["date"] == "2024-03-05T14:30:00+01:00"
    assert "a plain comment, not metadata" not in table.metadata.values()
    assert len(table.metadata) == 10
    assert table.first_data_line == 13  # 11 comment lines + header on line 12
    assert len(table) == 5


def test_crlf_and_trailing_blank_lines_are_accepted() -> None:
    table = read_table(GOOD / "crlf_trailing_blank_lines.csv")
    np.testing.assert_array_equal(table.columns["position [mm]"], [0.0, 0.5, 1.5])


def test_last_row_without_newline_is_read() -> None:
    assert len(read_table(GOOD / "no_final_newline.csv")) == 3


def test_parquet_columns_become_float64(tmp_path: Path) -> None:
    path = tmp_path / "capture.parquet"
    frame = pd.DataFrame({"t [s]": [0.0, 0.01, 0.02], "setpoint [counts]": [0, 400, 400]})
    frame.to_parquet(path)
    table = read_table(path)
    assert table.columns["setpoint [counts]"].dtype == np.float64
    np.testing.assert_array_equal(table.columns["setpoint [counts]"], [0.0, 400.0, 400.0])
    assert table.first_data_line == 1  # for Parquet, lines are row numbers


def test_parquet_text_column_is_rejected_by_name(tmp_path: Path) -> None:
    path = tmp_path / "capture.parquet"
    pd.DataFrame({"t [s]": [0.0, 0.01], "note": ["a", "b"]}).to_parquet(path)
    with pytest.raises(InputError, match=r"column 'note': column holds .*not numbers"):
        read_table(path)


def test_parquet_absurd_value_names_its_row(tmp_path: Path) -> None:
    path = tmp_path / "capture.parquet"
    pd.DataFrame({"t [s]": [0.0, 0.01, 0.02], "pos": [0.0, np.inf, 1.0]}).to_parquet(path)
    with pytest.raises(InputError, match=r"line 2, column 'pos': absurd value inf"):
        read_table(path)


def test_corrupt_parquet_is_an_input_error(tmp_path: Path) -> None:
    path = tmp_path / "capture.parquet"
    path.write_bytes(b"PAR1 this is not really parquet")
    with pytest.raises(InputError, match="not a readable Parquet file"):
        read_table(path)


def test_missing_file_is_an_input_error(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="cannot open the file"):
        read_table(tmp_path / "absent.csv")


def test_wrong_explicit_delimiter_names_the_right_one() -> None:
    with pytest.raises(
        InputError,
        match=r"line 1: only one column found with delimiter ';'; "
        r"the header splits on ','",
    ):
        read_table(GOOD / "utf8_bom.csv", delimiter=";")


@pytest.mark.parametrize(
    ("kwargs", "reason"),
    [
        ({"delimiter": "|"}, "delimiter '|' is not one of"),
        ({"decimal": ";"}, "decimal mark ';' is not '.' or ','"),
        ({"delimiter": ",", "decimal": ","}, "a decimal comma needs a ';' or tab delimiter"),
    ],
)
def test_bad_reader_options_are_rejected(kwargs: dict[str, str], reason: str) -> None:
    with pytest.raises(InputError, match=reason):
        read_table(GOOD / "utf8_bom.csv", **kwargs)


def test_parquet_nulls_become_nan_and_schema_metadata_is_kept(tmp_path: Path) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    path = tmp_path / "capture.parquet"
    table = pa.table(
        {
            "t": [0.0, 1.0, 2.0],
            "sp": pa.array([1, None, 3], type=pa.int32()),
            "y": pa.array([True, False, True]),
        },
        metadata={"Operator": "R. Okafor"},
    )
    pq.write_table(table, path)
    read = read_table(path)
    np.testing.assert_array_equal(read.columns["sp"], [1.0, np.nan, 3.0])
    np.testing.assert_array_equal(read.columns["y"], [1.0, 0.0, 1.0])
    assert read.metadata == {"operator": "R. Okafor"}


def test_overlong_line_is_rejected_without_reading_it_whole(tmp_path: Path) -> None:
    path = tmp_path / "junk.csv"
    path.write_bytes(b"t,sp,y\n0,0,0\n" + b"7" * 200_000 + b",1,1\n")
    with pytest.raises(InputError, match=r"line 3: a line longer than 65536 bytes"):
        read_table(path)
