"""Read a capture file (CSV, TSV or Parquet) into named float64 columns.

A text file is read once. Its data part goes to the first of three parsers that
accepts it:

1. the compiled plain-text parser ``logbook_plaintext`` (``native/plaintext.c``):
   unquoted numbers without spaces, of at most about 15 significant digits and a
   moderate exponent, as many rows as the file has data lines: what bench loggers
   write. Several times faster than the next;
2. pyarrow's CSV reader (one thread) for other plain files: unquoted finite
   numbers of any length, as many rows as the file has data lines (and for every
   plain file when the package was built without a C compiler);
3. pandas' C parser for any other file (quoted cells, NaN or infinity spellings,
   spaces around numbers, blank lines inside the data, every fault).

All three round correctly, so a file's values do not depend on which parser read
it. When the pandas parse fails too, or its row count does not match the file's
lines, a line-by-line pass finds the first fault and reports it with the file, the
1-based physical line and the column, so the fast paths never have to keep track
of where they are.

Accepted text layout, top to bottom:

* an optional UTF-8 byte-order mark;
* any number of lines starting with ``#``: ``# key: value`` lines become
  :attr:`RawTable.metadata` (keys lower-cased), other ``#`` lines are comments;
  blank lines are allowed among them;
* exactly one header row (names may be quoted and carry a unit in brackets);
* data rows, every cell a number (``nan``/``NaN`` is read as a missing value);
  blank lines are allowed only at the end of the file.

Delimiters ``,``, ``;`` and tab are sniffed when not given; the decimal mark is
``.`` or ``,`` (a decimal comma needs a ``;`` or tab delimiter).
"""

from __future__ import annotations

import csv
import io
import os
import re
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, BinaryIO

import numpy as np

from logbook.errors import InputError

try:  # compiled from native/plaintext.c when the package was built with a C compiler
    from logbook_plaintext import parse_columns as _parse_exact_plain
except ImportError:
    _parse_exact_plain = None

if TYPE_CHECKING:
    import pyarrow as pa

DELIMITERS = (",", ";", "\t")
DECIMAL_MARKS = (".", ",")
#: Values whose magnitude exceeds this are rejected as absurd (a corrupt cell or a
#: unit mix-up); no bench quantity in seconds, mm, deg, V or counts comes near it.
MAX_ABS_VALUE = 1e12
#: Longest line accepted (far above any real capture row; stops binary junk early).
MAX_LINE_BYTES = 65_536
#: Data lines after the header used to sniff the delimiter and decimal mark.
SNIFF_LINES = 50
#: The fast parse takes the data in pieces of about this many bytes (whole lines),
#: so that only one piece's parse buffers exist at a time.
PIECE_BYTES = 1 << 22

_METADATA = re.compile(r"^#\s*([A-Za-z_][\w .-]*?)\s*:\s*(.*?)\s*$")
_BOM = b"\xef\xbb\xbf"
_NAN_TEXT = ("nan", "NaN")
_DELIMITER_NAMES = {",": "','", ";": "';'", "\t": "tab"}


@dataclass(frozen=True)
class RawTable:
    """The columns of one file as read, before any role or unit is applied."""

    path: str  # as given
    columns: dict[str, np.ndarray]  # header name -> float64 values, file order
    metadata: dict[str, str]  # from leading "# key: value" lines (keys lower-cased)
    first_data_line: int  # 1-based physical line of the first data row

    def __len__(self) -> int:
        return len(next(iter(self.columns.values()))) if self.columns else 0

    @property
    def header_line(self) -> int | None:
        """Physical line of the header row, or None for files without one (Parquet)."""
        return self.first_data_line - 1 if self.first_data_line > 1 else None

    def line_of(self, row: int) -> int:
        """The physical line of 0-based data row ``row`` (the row number for Parquet)."""
        return self.first_data_line + row


def read_table(
    path: str | os.PathLike[str],
    *,
    delimiter: str | None = None,
    decimal: str | None = None,
    max_abs: float = MAX_ABS_VALUE,
    data: bytes | None = None,
) -> RawTable:
    """Read a CSV, TSV or Parquet file; every fault is an InputError naming file,
    line and column.

    delimiter: ``","``, ``";"`` or ``"\\t"``; sniffed from the header and the first
        data lines when None.
    decimal: ``"."`` or ``","``; sniffed when None (always ``"."`` with a comma
        delimiter).
    max_abs: finite values beyond this magnitude, and infinities, are rejected.
    data: the file's bytes, when the caller has read them already (the importer
        hashes them first): the file is then not read again, and the text is parsed
        where it lies, with no copy.
    """
    name = str(path)
    if delimiter is not None and delimiter not in DELIMITERS:
        raise InputError(f"delimiter {delimiter!r} is not one of ',', ';' or tab", file=name)
    if decimal is not None and decimal not in DECIMAL_MARKS:
        raise InputError(f"decimal mark {decimal!r} is not '.' or ','", file=name)
    if delimiter == "," and decimal == ",":
        raise InputError("a decimal comma needs a ';' or tab delimiter, not ','", file=name)
    try:
        if Path(name).suffix.lower() == ".parquet":
            table = _read_parquet(name, data)
        else:
            table = _read_text(name, delimiter, decimal, data)
    except OSError as exc:
        raise InputError(f"cannot open the file: {exc.strerror or exc}", file=name) from exc
    except InputError as exc:
        if exc.file is not None:
            raise
        raise exc.located(name) from exc
    _check_magnitudes(table, max_abs)
    return table


# --- text files -------------------------------------------------------------------


@dataclass(frozen=True)
class _Layout:
    """Where the data starts and how it is written."""

    metadata: dict[str, str]
    names: list[str]
    header_line: int
    data_offset: int  # byte offset of the first line after the header
    delimiter: str
    decimal: str


def _read_text(
    path: str, delimiter: str | None, decimal: str | None, raw: bytes | None
) -> RawTable:
    """The text table of ``path`` (or of its bytes ``raw``). The data rows are
    ``body[start:]``: the file's bytes after the header, not copied (unless blank
    lines at the end hold spaces or tabs: then the bytes up to them)."""
    if raw is None:
        with open(path, "rb") as fh:
            layout = _read_layout(fh, path, delimiter, decimal)
            fh.seek(layout.data_offset)
            # An exact size: an unsized read() after readline() is ten times slower here.
            body, start = fh.read(os.fstat(fh.fileno()).st_size - layout.data_offset), 0
    else:
        with io.BytesIO(raw) as fh:  # shares raw's buffer
            layout = _read_layout(fh, path, delimiter, decimal)
        body, start = raw, layout.data_offset
    lines, end = _data_extent(body, start)
    if body[end:].strip(b"\r\n"):  # spaces or tabs in the blank lines at the end
        body = body[:end]  # (a parser would take a tab there for empty cells)
    columns = _parse_plain(body, start, layout, lines)
    if columns is None:
        columns = _parse_general(body, start, path, layout, lines)
    return RawTable(path, columns, layout.metadata, layout.header_line + 1)


def _parse_plain(
    body: bytes, start: int, layout: _Layout, lines: int
) -> dict[str, np.ndarray] | None:
    """The columns of plain numeric text, parsed by the compiled parser or else by
    pyarrow's CSV reader (one thread: its threads were measured to slow batches
    down, as the callers already keep both cores busy); None when both decline,
    when the row count is not ``lines`` or when a value is not finite. Those files
    are left to :func:`_parse_general`, which then decides exactly as for any other
    file."""
    if lines == 0:
        return None
    columns = {name: np.empty(lines) for name in layout.names}
    if _parse_exact_plain is not None and lines == _parse_exact_plain(
        body, start, layout.delimiter, layout.decimal, list(columns.values())
    ):
        return columns  # its grammar admits finite numbers only
    return _parse_plain_pyarrow(body, start, layout, lines, columns)


def _parse_plain_pyarrow(
    body: bytes, start: int, layout: _Layout, lines: int, columns: dict[str, np.ndarray]
) -> dict[str, np.ndarray] | None:
    """:func:`_parse_plain` by pyarrow's CSV reader, into ``columns`` (one array of
    ``lines`` values per name)."""
    import pyarrow as pa  # here: `logbook analyze` seldom needs it, and it is slow to import
    import pyarrow.csv as pa_csv

    options = {
        "read_options": pa_csv.ReadOptions(column_names=layout.names, use_threads=False),
        "parse_options": pa_csv.ParseOptions(
            delimiter=layout.delimiter, quote_char=False, ignore_empty_lines=True
        ),
        "convert_options": pa_csv.ConvertOptions(
            column_types=dict.fromkeys(layout.names, pa.float64()),
            null_values=[],  # no nulls: a cell is a number or the parse fails
            strings_can_be_null=False,
            decimal_point=layout.decimal,
        ),
        "memory_pool": pa.system_memory_pool(),  # gives freed buffers back at once
    }
    filled = 0
    for piece in _pieces(body, start, PIECE_BYTES):
        try:
            table = pa_csv.read_csv(pa.BufferReader(piece), **options)
        except pa.ArrowException:
            return None
        rows = table.num_rows
        if filled + rows > lines:
            return None
        for name, column in zip(layout.names, table.columns, strict=True):
            at = filled
            for chunk in column.chunks:
                columns[name][at : at + len(chunk)] = _float_values(chunk)
                at += len(chunk)
        filled += rows
    if filled != lines or not all(np.isfinite(v).all() for v in columns.values()):
        return None
    return columns


def _pieces(body: bytes, start: int, size: int) -> Iterator[memoryview]:
    """``body[start:]`` in pieces of whole lines of about ``size`` bytes (views, no
    copies)."""
    view = memoryview(body)
    while start < len(body):
        stop = body.find(b"\n", start + size) + 1 if start + size < len(body) else 0
        stop = stop or len(body)
        yield view[start:stop]
        start = stop


def _float_values(column: pa.DoubleArray) -> np.ndarray:
    """A view of a float64 column without nulls. (``to_numpy`` would import pandas.)"""
    return np.frombuffer(column.buffers()[1], np.float64, len(column), column.offset * 8)


def _parse_general(
    body: bytes, start: int, path: str, layout: _Layout, lines: int
) -> dict[str, np.ndarray]:
    """The columns by pandas' C parser; any fault is diagnosed line by line. (pandas
    is imported here, when a file needs it: it takes longer to import than most
    files take to read.)"""
    import pandas as pd

    first_data_line = layout.header_line + 1
    try:
        with warnings.catch_warnings():
            # pandas only warns when every row is wider than the header: make it fail
            warnings.simplefilter("error", pd.errors.ParserWarning)
            frame = pd.read_csv(
                _from(body, start),
                sep=layout.delimiter,
                decimal=layout.decimal,
                header=None,
                names=layout.names,
                dtype=np.float64,
                engine="c",
                encoding="utf-8",
                keep_default_na=False,
                na_values=list(_NAN_TEXT),
                skip_blank_lines=True,
                skipinitialspace=True,
                index_col=False,
            )
    except pd.errors.EmptyDataError:
        raise InputError("no data rows after the header", file=path, line=first_data_line) from None
    except (ValueError, UnicodeDecodeError, pd.errors.ParserWarning) as exc:
        _diagnose(body, start, path, layout)
        raise InputError(
            f"cannot be read as a table of numbers ({_one_line(exc)})", file=path
        ) from exc
    if len(frame) == 0:
        raise InputError("no data rows after the header", file=path, line=first_data_line)
    if len(frame) != lines:
        _diagnose(body, start, path, layout)
        raise InputError("the rows read do not match the lines of the file", file=path)
    return {n: frame[n].to_numpy(dtype=np.float64) for n in layout.names}


def _read_layout(fh: BinaryIO, path: str, delimiter: str | None, decimal: str | None) -> _Layout:
    """Read metadata and the header row from the start of ``fh``, and settle
    delimiter and decimal mark (lines are read one by one, each at most
    MAX_LINE_BYTES, so a binary file is rejected without reading it whole)."""
    metadata: dict[str, str] = {}
    metadata_lines: dict[str, int] = {}
    line_no = 0
    header: str | None = None
    while header is None:
        raw = fh.readline(MAX_LINE_BYTES + 1)
        if not raw:
            break
        line_no += 1
        text = _decode(
            raw[len(_BOM) :] if line_no == 1 and raw.startswith(_BOM) else raw, path, line_no
        ).strip()
        if not text:
            continue
        if text.startswith("#"):
            match = _METADATA.match(text)
            if match:
                key = match.group(1).strip().lower()
                if key in metadata:
                    raise InputError(
                        f"metadata key '{key}' is given twice (first on line "
                        f"{metadata_lines[key]})",
                        file=path,
                        line=line_no,
                    )
                metadata[key] = match.group(2)
                metadata_lines[key] = line_no
            continue
        header = text
    if header is None:
        reason = "empty file" if line_no == 0 else "no header row (only comments or blanks)"
        raise InputError(reason, file=path, line=line_no or None)
    data_offset = fh.tell()
    sample = []
    for _ in range(SNIFF_LINES):
        raw = fh.readline(MAX_LINE_BYTES + 1)
        if not raw:
            break
        sample.append(_decode(raw, path, line_no + len(sample) + 1).strip())
    header_line = line_no
    chosen = delimiter or _sniff_delimiter(header, sample)
    names = _split(header, chosen)
    if len(names) < 2:
        if delimiter is None:
            reason = "only one column found: no ',', ';' or tab separates the header"
        else:
            others = [d for d in DELIMITERS if d != delimiter and _field_count(header, d) > 1]
            hint = f"; the header splits on {_DELIMITER_NAMES[others[0]]}" if others else ""
            reason = (
                f"only one column found with delimiter {_DELIMITER_NAMES[delimiter]}"
                f"{hint} (wrong delimiter?)"
            )
        raise InputError(reason, file=path, line=header_line)
    _check_names(names, path, header_line)
    if all(_NUMBER["."].fullmatch(n) or _NUMBER[","].fullmatch(n) for n in names):
        raise InputError(
            "missing header row: this line holds numbers, not column names",
            file=path,
            line=header_line,
        )
    if decimal is None:
        decimal = "." if chosen == "," else _sniff_decimal(sample, chosen, names, path, header_line)
    elif decimal == chosen:
        raise InputError(f"the decimal mark {decimal!r} is also the delimiter", file=path)
    return _Layout(metadata, names, header_line, data_offset, chosen, decimal)


def _decode(raw: bytes, path: str, line_no: int) -> str:
    if b"\x00" in raw:
        raise InputError("binary data (NUL bytes), not a text table", file=path, line=line_no)
    if len(raw) > MAX_LINE_BYTES:
        raise InputError(
            f"a line longer than {MAX_LINE_BYTES} bytes is too long for a table (binary data?)",
            file=path,
            line=line_no,
        )
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(
            "not UTF-8 text (binary data, or another encoding: save the file as UTF-8)",
            file=path,
            line=line_no,
        ) from None
    if "\r" in text.rstrip("\r\n"):
        raise InputError(
            "carriage return inside a line (save with \\n or \\r\\n line ends)",
            file=path,
            line=line_no,
        )
    return text


def _split(line: str, delimiter: str) -> list[str]:
    """Fields of one line, quotes removed and surrounding spaces stripped."""
    if '"' not in line:  # what the csv module makes of a line without quotes, faster
        return [field.strip() for field in line.split(delimiter)] if line else []
    try:
        return [field.strip() for field in next(csv.reader([line], delimiter=delimiter))]
    except csv.Error as exc:  # _decode rules out the known causes; kept as a safety net
        raise InputError(f"cannot split a line into fields ({_one_line(exc)})") from exc


def _field_count(line: str, delimiter: str) -> int:
    """``len(_split(line, delimiter))``; a line without quotes is counted, not split."""
    if '"' in line:
        return len(_split(line, delimiter))
    return line.count(delimiter) + 1 if line else 0


def _sniff_delimiter(header: str, sample: list[str]) -> str:
    """The first of tab, ';', ',' that splits the header into the same number (>1) of
    fields as every sampled data line; else the one splitting the header most."""
    for candidate in ("\t", ";", ","):
        width = _field_count(header, candidate)
        if width > 1 and all(_field_count(s, candidate) == width for s in sample if s):
            return candidate
    return max(("\t", ";", ","), key=lambda d: _field_count(header, d))


def _number_pattern(decimal: str) -> re.Pattern[str]:
    mark = re.escape(decimal)
    return re.compile(
        rf"[+-]?(?:\d+(?:{mark}\d*)?|{mark}\d+)(?:[eE][+-]?\d+)?|[+-]?(?i:inf(?:inity)?)|nan|NaN"
    )


_NUMBER = {mark: _number_pattern(mark) for mark in DECIMAL_MARKS}
_FRACTION = {mark: re.compile(rf"[+-]?\d*{re.escape(mark)}\d") for mark in DECIMAL_MARKS}


def _sniff_decimal(
    sample: list[str], delimiter: str, names: list[str], path: str, header_line: int
) -> str:
    """',' when sampled cells use a decimal comma, '.' otherwise; both is an error."""
    seen: dict[str, tuple[int, str]] = {}
    for line_no, line in enumerate(sample, start=header_line + 1):
        for name, cell in zip(names, _split(line, delimiter) if line else [], strict=False):
            for mark in DECIMAL_MARKS:
                if _FRACTION[mark].match(cell) and _NUMBER[mark].fullmatch(cell):
                    seen.setdefault(mark, (line_no, name))
    if len(seen) == 2:
        line_no, name = max(seen.values())
        raise InputError(
            "mixed decimal marks: both '.' and ',' are used", file=path, line=line_no, column=name
        )
    return next(iter(seen), ".")


def _check_names(names: list[str], path: str, line: int | None) -> None:
    """Header names must be non-empty and unique."""
    seen: set[str] = set()
    for position, name in enumerate(names, start=1):
        if not name:
            raise InputError(
                f"the header name in position {position} is empty",
                file=path,
                line=line,
                column=f"#{position}",
            )
        if name in seen:
            raise InputError("duplicate header name", file=path, line=line, column=name)
        seen.add(name)


def _data_extent(body: bytes, start: int, *, block: int = 4096) -> tuple[int, int]:
    """(data lines, end) of ``body[start:]`` (the bytes after the header): its
    physical lines up to the last one with content, and the offset just past that
    content. Blank lines after it (spaces, tabs, line ends) are not data."""
    end = len(body)
    while end > start:  # find the end of the last line with content, a block at a time
        first = max(start, end - block)
        kept = len(body[first:end].rstrip(b" \t\r\n"))
        if kept:
            return _count_newlines(body, start, first + kept) + 1, first + kept
        end = first
    return 0, start


def _count_newlines(body: bytes, start: int, stop: int, *, block: int = 1 << 20) -> int:
    """The b"\\n" in ``body[start:stop]``, by numpy (several times faster than
    bytes.count here), a block at a time so that no file-sized temporary is made."""
    count = 0
    for first in range(start, stop, block):
        text = np.frombuffer(body, np.uint8, min(block, stop - first), first)
        count += int(np.count_nonzero(text == 10))
    return count


def _one_line(exc: Exception) -> str:
    """A library's error message on one line (pandas' may end in a line break)."""
    return " ".join(str(exc).split())


def _from(body: bytes, start: int) -> io.BytesIO:
    """A file object reading ``body`` from ``start`` on (sharing its buffer)."""
    fh = io.BytesIO(body)
    fh.seek(start)
    return fh


def _diagnose(body: bytes, start: int, path: str, layout: _Layout) -> None:
    """Walk the data lines and raise an InputError for the first fault found."""
    width = len(layout.names)
    number = _NUMBER[layout.decimal]
    other_mark = "," if layout.decimal == "." else "."
    blank_line: int | None = None
    with _from(body, start) as fh:
        lines = iter(lambda: fh.readline(MAX_LINE_BYTES + 1), b"")
        for line_no, raw in enumerate(lines, start=layout.header_line + 1):
            text = _decode(raw, path, line_no).strip()
            if not text:
                blank_line = blank_line or line_no
                continue
            if blank_line is not None:
                raise InputError("blank line inside the data", file=path, line=blank_line)
            if text.count('"') % 2:
                raise InputError("unbalanced quote", file=path, line=line_no)
            fields = _split(text, layout.delimiter)
            if len(fields) < width:
                raise InputError(
                    f"truncated row: {len(fields)} of {width} fields",
                    file=path,
                    line=line_no,
                    column=layout.names[len(fields)],
                )
            if len(fields) > width:
                hint = (
                    " (a decimal comma in a comma-separated file?)"
                    if (layout.delimiter == ",")
                    else ""
                )
                raise InputError(
                    f"too many fields: {len(fields)}, the header has {width}{hint}",
                    file=path,
                    line=line_no,
                )
            for name, cell in zip(layout.names, fields, strict=True):
                if not cell:
                    raise InputError("empty cell", file=path, line=line_no, column=name)
                if number.fullmatch(cell):
                    continue
                if _NUMBER[other_mark].fullmatch(cell):
                    raise InputError(
                        f"mixed decimal marks: {cell!r} uses {other_mark!r} but the file "
                        f"uses {layout.decimal!r}",
                        file=path,
                        line=line_no,
                        column=name,
                    )
                shown = cell if len(cell) <= 20 else cell[:20] + "..."
                raise InputError(
                    f"text {shown!r} in a numeric column", file=path, line=line_no, column=name
                )


# --- Parquet -----------------------------------------------------------------------


def _read_parquet(path: str, raw: bytes | None) -> RawTable:
    """Numeric Parquet columns as float64; nulls become NaN. Lines are row numbers."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(path if raw is None else pa.BufferReader(raw))
    except (pa.ArrowException, ValueError) as exc:
        raise InputError(f"not a readable Parquet file ({_one_line(exc)})", file=path) from exc
    if table.num_columns == 0 or table.num_rows == 0:
        raise InputError("the Parquet file holds no data", file=path)
    names = [str(n).strip() for n in table.column_names]
    _check_names(names, path, line=None)
    columns: dict[str, np.ndarray] = {}
    for name, column in zip(names, table.columns, strict=True):
        kind = column.type
        if not (
            pa.types.is_integer(kind) or pa.types.is_floating(kind) or pa.types.is_boolean(kind)
        ):
            raise InputError(f"column holds {kind}, not numbers", file=path, column=name)
        columns[name] = column.cast(pa.float64()).to_numpy(zero_copy_only=False)
    metadata = {
        key.decode("utf-8", "replace").lower(): value.decode("utf-8", "replace")
        for key, value in (table.schema.metadata or {}).items()
        if not key.startswith((b"pandas", b"ARROW:"))
    }
    return RawTable(path, columns, metadata, first_data_line=1)


# --- checks shared by both formats ------------------------------------------------------


def _check_magnitudes(table: RawTable, max_abs: float) -> None:
    """Reject infinities and values beyond ``max_abs`` (NaN is left to the caller)."""
    for name, values in table.columns.items():
        with np.errstate(invalid="ignore"):
            bad = np.abs(values) > max_abs
        if bad.any():
            row = int(np.argmax(bad))
            raise InputError(
                f"absurd value {float(values[row])!r} (magnitude above {max_abs:g})",
                file=table.path,
                line=table.line_of(row),
                column=name,
            )
