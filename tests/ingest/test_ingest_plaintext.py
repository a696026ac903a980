"""The compiled plain-text parser (native/plaintext.c): correctly rounded values, the
exact grammar it accepts, and files that read the same whichever parser reads them.

Reference for every value: Python's float(), which rounds decimal strings correctly
to the nearest double, ties to even (the Python documentation of float(); CPython
uses D. M. Gay's correctly rounded conversion)."""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from logbook.errors import InputError
from logbook.ingest import read_table, reader

# Skipped without the module; test_ingest_reader.py fails then, saying why.
parse_columns = pytest.importorskip("logbook_plaintext").parse_columns


def parse(
    text: str, columns: int = 1, *, rows: int = 8, delimiter: str = ",", mark: str = "."
) -> tuple[int | None, list[np.ndarray]]:
    """(rows parsed or None, the column buffers) for ``text``."""
    buffers = [np.full(rows, np.nan) for _ in range(columns)]
    return parse_columns(text.encode(), 0, delimiter, mark, buffers), buffers


def test_random_decimals_are_correctly_rounded() -> None:
    rng = np.random.default_rng(7)
    count = 20_000
    mantissas = rng.integers(0, 10 ** rng.integers(1, 16, count), dtype=np.int64)
    points = rng.integers(0, 16, count)  # digits after the decimal mark
    exponents = rng.integers(-6, 7, count)
    cells = []
    for m, point, exponent in zip(
        mantissas.tolist(), points.tolist(), exponents.tolist(), strict=True
    ):
        digits = str(m).rjust(point + 1, "0")
        cell = f"{digits[:-point]}.{digits[-point:]}" if point else digits
        if exponent:
            cell += f"e{exponent:+d}"
        cells.append(("-" if m % 3 == 0 else "") + cell)
    rows, (values,) = parse("\n".join(cells), rows=count)
    assert rows == count
    assert [v.hex() for v in values.tolist()] == [float(c).hex() for c in cells]


@pytest.mark.parametrize(
    "cell",
    [
        "9007199254740992",  # 2**53: the largest mantissa of the exact fast path
        "9007199254740.992",
        "1e22",  # 10**22: the largest exact power of ten
        "1e-22",
        "0.0000000000000000000001",  # 1e-22 written out
        "4.5e+15",
        "0e999",  # zero whatever the exponent
        "+.5",
        "5.",
        "007.50",
        "-0",
        "-0.0e-5",
    ],
)
def test_cells_on_the_fast_path_read_as_python_reads_them(cell: str) -> None:
    rows, (values,) = parse(cell + "\n")
    assert rows == 1
    assert values[0].hex() == float(cell).hex()


@pytest.mark.parametrize(
    ("text", "why"),
    [
        ("9007199254740993", "mantissa above 2**53: not exact as a double"),
        ("12345678901234567890", "more than 19 significant digits"),
        ("1e23", "10**23 is not an exact double"),
        ("1e-23", "10**-23 is not an exact double"),
        ("0.00000000000000000000001", "1e-23 written out"),
        ("nan", "NaN spelling"),
        ("inf", "infinity spelling"),
        ("1.5.2", "two marks"),
        ("1e", "exponent without digits"),
        ("1e+", "exponent without digits"),
        (".", "no digit"),
        ("-", "no digit"),
        (" 1.5", "space before the number"),
        ("1.5 ", "space after the number"),
        ('"1.5"', "quoted"),
        ("0x10", "hexadecimal"),
        ("1_000", "digit separator"),
        ("1,5", "decimal comma where the mark is '.'"),
        ("1\r2", "carriage return inside the data"),
        ("1\n\n2", "blank line inside the data"),
        ("1\n x", "text after blank space"),
        ("µ", "not ASCII"),
    ],
)
def test_anything_else_is_declined(text: str, why: str) -> None:
    rows, _ = parse(text + "\n")
    assert rows is None, why


def test_rows_and_line_ends() -> None:
    rows, (t, y) = parse("0,1.5\r\n0.1,-2\n0.2,3e-1", columns=2)  # no final newline
    assert rows == 3
    assert t.tolist()[:3] == [0.0, 0.1, 0.2] and y.tolist()[:3] == [1.5, -2.0, 0.3]
    rows, _ = parse("0,1\n1,2\n\n\r\n", columns=2)  # empty lines at the end only
    assert rows == 2
    assert parse("0,1\n1,2\n \n", columns=2)[0] is None  # spaces: left to the others


@pytest.mark.parametrize("text", ["0,1,2\n", "0\n", "0,1\n2\n", "0,,1\n"])
def test_a_row_with_the_wrong_number_of_cells_is_declined(text: str) -> None:
    assert parse(text, columns=2)[0] is None


@pytest.mark.parametrize(("delimiter", "mark"), [(";", ","), ("\t", ","), ("\t", ".")])
def test_other_delimiters_and_the_decimal_comma(delimiter: str, mark: str) -> None:
    text = f"0{mark}25{delimiter}-1{mark}5e3\n"
    rows, (a, b) = parse(text, columns=2, delimiter=delimiter, mark=mark)
    assert rows == 1 and (a[0], b[0]) == (0.25, -1500.0)
    other = "." if mark == "," else ","
    if other != delimiter:  # the other mark is not a number here
        assert (
            parse(f"0{other}25{delimiter}1\n", columns=2, delimiter=delimiter, mark=mark)[0] is None
        )


def test_more_rows_than_the_columns_hold_are_declined_and_fewer_are_counted() -> None:
    assert parse("1\n2\n3\n", rows=2)[0] is None
    assert parse("1\n2\n", rows=5)[0] == 2


def test_the_start_offset_skips_the_header() -> None:
    data = b"t,y\n1,2\n"
    buffers = [np.empty(1), np.empty(1)]
    assert parse_columns(data, 4, ",", ".", buffers) == 1
    assert [b[0] for b in buffers] == [1.0, 2.0]


def test_misuse_is_a_python_error() -> None:
    with pytest.raises(TypeError, match="float64"):
        parse_columns(b"1\n", 0, ",", ".", [np.empty(1, dtype=np.float32)])
    with pytest.raises(ValueError, match="equal lengths"):
        parse_columns(b"1,2\n", 0, ",", ".", [np.empty(1), np.empty(2)])
    with pytest.raises(ValueError, match="different"):
        parse_columns(b"1\n", 0, ",", ",", [np.empty(1)])
    with pytest.raises(ValueError, match="outside"):
        parse_columns(b"1\n", 5, ",", ".", [np.empty(1)])
    with pytest.raises(ValueError, match="contiguous"):
        parse_columns(b"1\n", 0, ",", ".", [np.empty(4)[::2]])


@settings(max_examples=500, deadline=None)
@given(st.binary(max_size=200), st.integers(1, 4), st.integers(0, 8))
def test_any_bytes_give_a_row_count_or_none(data: bytes, columns: int, rows: int) -> None:
    buffers = [np.full(rows, np.nan) for _ in range(columns)]
    got = parse_columns(data, 0, ",", ".", buffers)
    assert got is None or 0 <= got <= rows
    if got:  # every value it reports is a finite number it read
        assert all(np.isfinite(b[:got]).all() for b in buffers)


# --- the reader reads a file the same whichever parser takes it ---------------------

CELLS = st.one_of(
    st.integers(0, 9)
    .flatmap(lambda places: st.decimals(-(10**6), 10**6, allow_nan=False, places=places))
    .map(str),
    st.floats(-1e9, 1e9, allow_nan=False).map(repr),
    st.floats(-1e9, 1e9, allow_nan=False).map(lambda v: f"{v:.6g}"),
    st.integers(-(10**20), 10**20).map(str),
    st.sampled_from(
        [
            "-0",
            "+.5",
            "5.",
            "1e22",
            "1e23",
            "2.5e-30",
            " 1",
            "1 ",
            "nan",
            "NaN",
            "inf",
            "",
            "x",
            '"3"',
            "1e",
            "0x1",
        ]
    ),
)


@st.composite
def data_parts(draw: st.DrawFn) -> tuple[str, str]:
    """(delimiter, the lines after the header) of a two-column file, mostly plain."""
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    mark = "," if delimiter != "," and draw(st.booleans()) else "."
    rows = draw(st.lists(st.tuples(CELLS, CELLS), min_size=1, max_size=12))
    lines = [delimiter.join(cell.replace(".", mark) for cell in row) for row in rows]
    end = draw(st.sampled_from(["\n", "\r\n"]))
    tail = draw(st.sampled_from(["", end, end + end, end + " \t"]))
    return delimiter, end.join(lines) + tail


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data_parts())
def test_a_file_reads_the_same_with_and_without_the_compiled_parser(
    part: tuple[str, str],
) -> None:
    delimiter, body = part
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "capture.csv"
        path.write_text(f"t{delimiter}y\n{body}", encoding="utf-8", newline="")
        compiled = _outcome(path)
        saved = reader._parse_exact_plain
        reader._parse_exact_plain = None
        try:
            without = _outcome(path)
        finally:
            reader._parse_exact_plain = saved
    assert compiled == without


def _outcome(path: Path) -> object:
    """The table's values (as bytes, so NaN and -0.0 compare exactly) or the error."""
    try:
        table = read_table(path, max_abs=1e300)
    except InputError as exc:
        return str(exc)
    return {name: values.tobytes() for name, values in table.columns.items()}
