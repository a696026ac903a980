"""Binary codecs for what a run keeps: its decoded samples and its original file.

Samples are one Parquet table (LZ4-compressed, float64 columns in channel
order), which round-trips bit-exactly: NaN payloads, negative zero, subnormals and
extremes come back as they went in. The original file is kept zstd-compressed
(fast enough not to slow an import, and smaller than zlib) so the raw evidence is
never lost; its size is stored beside it.
"""

from __future__ import annotations

import io

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from logbook.trace import Channel, Role, Trace

#: Stored with each trace. Traces of either format decode alike (Parquet names its
#: codec): "parquet-zstd-v1" was written before imports were made faster.
SAMPLES_FORMAT = "parquet-lz4-v1"
RAW_CODEC = "zstd"


def encode_samples(trace: Trace) -> bytes:
    """The trace's channels as Parquet bytes (names as column names, in order)."""
    table = pa.table(
        {c.name: pa.array(np.asarray(c.values, dtype=np.float64)) for c in trace.channels}
    )
    sink = io.BytesIO()
    # Byte-stream-split floats compress better and faster. LZ4 takes about half the
    # time of zstd level 1 here for 5 % more bytes (benchmarks/bench_import.py).
    pq.write_table(
        table,
        sink,
        compression="lz4",
        use_dictionary=False,
        use_byte_stream_split=True,
        write_statistics=False,
    )
    return sink.getvalue()


def decode_samples(
    blob: bytes, channels: list[tuple[str, str, str]], quality: dict[str, float] | None = None
) -> Trace:
    """Rebuild a Trace from Parquet bytes and (name, role, unit) per channel."""
    table = pq.read_table(io.BytesIO(blob))
    decoded = tuple(
        Channel(
            name=name,
            role=Role(role),
            unit=unit,
            values=table.column(name).to_numpy(zero_copy_only=False),
        )
        for name, role, unit in channels
    )
    return Trace(channels=decoded, quality=dict(quality or {}))


def compress_raw(data: bytes) -> bytes:
    return pa.compress(data, codec=RAW_CODEC, asbytes=True)


def decompress_raw(data: bytes, size: int) -> bytes:
    """The original bytes; ``size`` is their length, as stored with the run."""
    return pa.decompress(data, decompressed_size=size, codec=RAW_CODEC, asbytes=True)
