"""Readable layouts: TSV, decimal comma, BOM, quoted headers, metadata, Parquet."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from logbook.errors import InputError
from logbook.ingest import read_table

GOOD = Path(__file__).parent / "good"


def test_the_compiled_parser_is_built_and_used() -> None:
    # The README's install compiles native/plaintext.c when a C compiler is present;
    # without it every plain file goes to pyarrow's reader, several times slower.
    from logbook.ingest import reader

    assert reader._parse_exact_plain is not None, (
        "logbook_plaintext was not built: install gcc and the Python headers, then reinstall"
    )


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


def test_blank_lines_at_the_end_may_hold_spaces_and_tabs() -> None:
    # A tab there is not a row of empty cells: the lines after the last row are blank.
    table = read_table(GOOD / "tab_separated_blank_tail.tsv")
    np.testing.assert_array_equal(table.columns["position [mm]"], [0.0, 0.4, 0.9])


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


# Decimal strings whose nearest double is easy to get wrong: Python's float() rounds
# correctly to nearest, ties to even (IEEE 754), and is the reference here.
TRICKY_NUMBERS = [
    "0.1",
    "0.30000000000000004",
    "9007199254740993",  # 2**53 + 1: a tie, rounds to the even 2**53
    "1.00000000000000011102230246251565404236316680908203125",  # tie: rounds to 1.0
    "1.000000000000000111022302462515654042363166809082031250001",  # just above it
    "2.2250738585072011e-308",
    "4.9e-324",
    "123456789012.345678",
    "-0",
    "+.5e+2",
    " 2.5",
]


@pytest.mark.parametrize(("delimiter", "decimal"), [(",", "."), (";", ","), ("\t", ".")])
def test_numbers_are_read_as_python_reads_them(
    tmp_path: Path, delimiter: str, decimal: str
) -> None:
    cells = [text.replace(".", decimal) for text in TRICKY_NUMBERS]
    path = tmp_path / "numbers.csv"
    path.write_text(
        f"value{delimiter}index\n"
        + "".join(f"{cell}{delimiter}{i}\n" for i, cell in enumerate(cells)),
        encoding="utf-8",
    )
    values = read_table(path, max_abs=1e300).columns["value"]
    assert [v.hex() for v in values.tolist()] == [float(t).hex() for t in TRICKY_NUMBERS]


def test_a_large_file_is_read_in_pieces_without_losing_a_row(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from logbook.ingest import reader

    monkeypatch.setattr(reader, "_parse_exact_plain", None)  # pyarrow's reader reads pieces
    monkeypatch.setattr(reader, "PIECE_BYTES", 100)  # a few lines per piece
    rng = np.random.default_rng(1)
    values = rng.normal(0.0, 1e3, (997, 3))
    path = tmp_path / "capture.csv"
    rows = "".join(f"{a!r},{b!r},{c!r}\r\n" for a, b, c in values.tolist())
    path.write_text("# axis: x\nt,sp,y\n" + rows + "\r\n")
    table = read_table(path)
    np.testing.assert_array_equal(np.column_stack(list(table.columns.values())), values)
    assert table.first_data_line == 3


def test_quoted_numbers_and_nan_cells_are_read_like_other_cells(tmp_path: Path) -> None:
    # The files the plain fast parse leaves to the general one (quotes, NaN).
    path = tmp_path / "capture.csv"
    path.write_text('t,sp,spare\n0.0,"1.5",nan\n0.1,2.5,NaN\n0.2,3.5,1\n')
    table = read_table(path)
    np.testing.assert_array_equal(table.columns["sp"], [1.5, 2.5, 3.5])
    np.testing.assert_array_equal(table.columns["spare"], [np.nan, np.nan, 1.0])


def test_other_nan_spellings_are_text(tmp_path: Path) -> None:
    path = tmp_path / "capture.csv"
    path.write_text("t,sp\n0.0,1\n0.1,NAN\n")
    with pytest.raises(InputError, match=r"line 3, column 'sp': text 'NAN' in a numeric column"):
        read_table(path)


def _outcome(path: Path, **kwargs: object) -> object:
    """What read_table makes of a file: its table's contents, or its error message."""
    try:
        table = read_table(path, **kwargs)
    except InputError as exc:
        return str(exc)
    columns = {name: values.tobytes() for name, values in table.columns.items()}
    return columns, table.metadata, table.first_data_line


MALFORMED = Path(__file__).parent / "malformed"


@pytest.mark.parametrize(
    "path",
    sorted(GOOD.glob("*.[ct]sv")) + sorted(MALFORMED.glob("*.csv")),
    ids=lambda path: path.name,
)
def test_bytes_already_read_give_what_the_file_gives(path: Path) -> None:
    """The importer hands over the bytes it hashed (``data=``); every good and every
    malformed file must read the same, table or error, as from its path."""
    assert _outcome(path, data=path.read_bytes()) == _outcome(path)


def test_parquet_bytes_already_read_give_what_the_file_gives(tmp_path: Path) -> None:
    path = tmp_path / "capture.parquet"
    pd.DataFrame({"t [s]": [0.0, 0.01, 0.02], "pos": [0.0, 0.5, 1.0]}).to_parquet(path)
    assert _outcome(path, data=path.read_bytes()) == _outcome(path)
    corrupt = tmp_path / "corrupt.parquet"
    corrupt.write_bytes(b"PAR1 not really")
    message = _outcome(corrupt, data=corrupt.read_bytes())
    assert isinstance(message, str) and "not a readable Parquet file" in message
