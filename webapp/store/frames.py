"""Data frames as compact Parquet bytes that read back bit for bit.

A saved explanation is a frame of one row per grid step (80,641 rows for 8 weeks of
1-minute data) and a dozen columns. Plain Parquet with zstd keeps about 6 bytes of each
float: the band columns are full-precision doubles. Most of them are not new information,
though: ``expected`` is ``trend + seasonal``, ``seasonal`` the sum of the per-period
columns, the band's sides ``expected + k * band_scale`` for a calibrated constant ``k``,
``residual`` is ``value - expected``, a seasonal pattern repeats from day to day, and
imported values are short decimals. So each float64 column is stored as its *prediction
error*: the XOR of its bits (or the difference of its bit patterns taken as integers) with a
prediction made from columns decoded before it, or from its own earlier rows. Where the
prediction is exact the stored word is zero, which compresses to almost nothing; where it is
not, the word still restores every bit (NaN payloads, signed zeros and infinities
included). Correctness never depends on a prediction being right, only the size does; and
the bytes are read back before they are kept (plain Parquet if a column would not return).
Nothing here knows how the band is computed: each frame's relations are found in its data.

The predictors, chosen per column by trying them (the smallest compressed size wins; the
sizes of all candidates come from a few Parquet writes of stretches of their words):

* ``previous``, ``linear``, ``cubic``: the row before, and first to third differences;
  ``lag``: the row one day or one week before, on a regular time grid.
* ``alternate``: every other row from a blend of the three rows before it, with weights
  fitted on the frame (a pattern interpolated between bin centres, two rows per bin, has
  half its rows fixed by their neighbours); the other rows by second differences. Its two
  parities are stored apart, and its blended rows decode one by one.
* ``blocks``: each block of whole days under its own one of the above (a seasonal pattern
  that is the same for some days and moves on others).
* ``sum`` / ``difference`` of two other columns, and ``scaled``: ``a + k * b`` for a
  constant ``k``, searched among the doubles next to the median of ``(x - a) / b`` (for the
  pairs where enough rows lie near ``a + median * b`` for a search to succeed).
* ``decimal``: ``x = n / 10**d`` with ``n`` an integer, missing values staying missing;
  stored as ``n`` itself, or as its distance from another column rounded to ``d``
  decimals (values near their expected value).

Every other column (booleans, integers, text) and the index go through pyarrow's pandas
conversion as they are; the index frequency is kept in the schema metadata. The bytes are a
normal Parquet file: any Parquet reader opens it and sees the encoded columns and, under
``whyfired.codecs`` in the metadata, how to decode them.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterator
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

FREQ_KEY = b"whyfired.index_freq"
CODECS_KEY = b"whyfired.codecs"
MAX_DECIMALS = 6
DECIMALS_HEAD = 64  # values tried for every number of decimals before the whole column
EXACT_SHARE = 0.5  # a formula is tried when at least this share of a sample is exact
SAMPLE_ROWS = 2000
SIZE_ROWS = 32768  # rows compressed to compare codecs
SIZE_STRETCHES = 8
SIZE_BATCH = 32  # candidates measured in one Parquet write (8 MB of stretches at most)
OWN_BATCH = 4  # columns whose differenced words are computed together
SCALE_ULPS = 32  # how far from the median ratio a scale constant is looked for
SCALE_ROWS = 256  # rows the candidates are tried on
PAIR_CELLS = 1 << 19  # values per array when all pairs are tested at once (memory)
MIN_BLOCK_ROWS = 1024
FIT_ROWS = 8192  # rows the alternate blend is fitted on
SIZE_LEVEL = 3  # zstd level of the size comparisons


@dataclass(frozen=True)
class Codec:
    """How one float column is stored: ``kind`` with its column references and constant."""

    kind: str  # raw | previous | linear | cubic | lag | sum | difference | scaled | decimal
    #            | blocks
    refs: tuple[str, ...] = ()
    number: float = 0.0  # the lag in rows, the scale k, the decimals, or the block rows
    runs: tuple[tuple[Codec, int], ...] = ()  # blocks: (own-row codec, how many blocks)
    coefs: tuple[float, ...] = ()  # alternate: the weights of the three rows before

    def as_json(self) -> dict:
        data = {"kind": self.kind, "refs": list(self.refs), "number": self.number}
        if self.runs:
            data["runs"] = [c.as_json() | {"blocks": count} for c, count in self.runs]
        if self.coefs:
            data["coefs"] = list(self.coefs)
        return data

    @classmethod
    def from_json(cls, data: dict) -> Codec:
        runs = tuple((cls.from_json(part), int(part["blocks"])) for part in data.get("runs", ()))
        coefs = tuple(float(c) for c in data.get("coefs", ()))
        return cls(str(data["kind"]), tuple(data["refs"]), float(data["number"]), runs, coefs)

    @property
    def reach(self) -> int:
        """How many rows back an own-row codec reads."""
        orders = {"raw": 0, "previous": 1, "linear": 2, "cubic": 3, "alternate": 4}
        return int(self.number) if self.kind == "lag" else orders[self.kind]


def encode_frame(frame: pd.DataFrame, *, compact: bool = True) -> bytes:
    """``frame`` as Parquet bytes (zstd), float columns stored as prediction errors;
    ``compact=False`` stores them as they are (the format before the codecs).

    The compact bytes are read back before they are returned: should a column not come
    back bit for bit, the frame is stored plain instead."""
    names = list(frame.columns)
    if not all(isinstance(n, str) for n in names) or len(set(names)) != len(names):
        raise ValueError(f"a stored frame needs unique text column names, got {names!r}")
    codecs = choose_codecs(frame) if compact else {}
    data = _write(frame, codecs)
    if codecs and not _restores(decode_frame(data), frame, codecs):
        return _write(frame, {})
    return data


def _restores(back: pd.DataFrame, frame: pd.DataFrame, codecs: dict[str, Codec]) -> bool:
    return all(
        np.ascontiguousarray(back[name].to_numpy()).tobytes()
        == np.ascontiguousarray(frame[name].to_numpy()).tobytes()
        for name in codecs
    )


def _write(frame: pd.DataFrame, codecs: dict[str, Codec]) -> bytes:
    work = frame.copy(deep=False)
    encodings: dict[str, str] = {}
    for name, codec in codecs.items():
        work[name] = _encode_column(frame, name, codec)
        delta = codec.kind == "decimal" and not codec.refs
        encodings[name] = "DELTA_BINARY_PACKED" if delta else "BYTE_STREAM_SPLIT"
    table = pa.Table.from_pandas(work, preserve_index=True)
    for column in table.schema.pandas_metadata.get("index_columns", []):
        kind = table.schema.field(column).type if isinstance(column, str) else None
        if kind is not None and (pa.types.is_timestamp(kind) or pa.types.is_int64(kind)):
            encodings[column] = "DELTA_BINARY_PACKED"  # a regular grid is one repeated step
    metadata = dict(table.schema.metadata or {})
    freq = getattr(frame.index, "freqstr", None)
    if freq:
        metadata[FREQ_KEY] = freq.encode()
    if codecs:
        order = {name: codecs[name].as_json() for name in decode_order(codecs)}
        metadata[CODECS_KEY] = json.dumps(order).encode()
    table = table.replace_schema_metadata(metadata)
    buffer = pa.BufferOutputStream()  # Arrow's own buffer: writes without taking the GIL
    pq.write_table(
        table,
        buffer,
        compression="zstd",
        use_dictionary=[c for c in table.column_names if c not in encodings],
        column_encoding=encodings or None,
    )
    return buffer.getvalue().to_pybytes()


def decode_frame(data: bytes) -> pd.DataFrame:
    """The frame ``encode_frame`` was given, exactly: values, dtypes, index, its frequency.
    Also reads Parquet bytes written without codecs (plain ``pyarrow`` output)."""
    # One file in memory: ParquetFile reads it without pq.read_table's dataset layer,
    # whose import alone costs a command such as an export a fifth of a second; and from
    # an Arrow buffer, not a Python file, so reading takes no GIL per page.
    table = pq.ParquetFile(pa.BufferReader(data)).read()
    metadata = table.schema.metadata or {}
    frame = table.to_pandas()
    codecs = json.loads(metadata[CODECS_KEY]) if CODECS_KEY in metadata else {}
    repeats: dict[str, list[tuple[np.ndarray, np.ndarray]]] = {}  # own-row codec: words, values
    for name, spec in codecs.items():  # stored in an order where references come first
        codec = Codec.from_json(spec)
        if codec.refs or codec.kind == "decimal":
            frame[name] = _decode_column(frame, name, codec)
            continue
        # A column stored twice (one seasonal period) is decoded once.
        words = frame[name].to_numpy()
        seen = repeats.setdefault(json.dumps(spec, sort_keys=True), [])
        values = next((v.copy() for w, v in seen if np.array_equal(w, words)), None)
        if values is None:
            values = _decode_column(frame, name, codec)
            seen.append((words, values))
        frame[name] = values
    freq = metadata.get(FREQ_KEY)
    if freq and isinstance(frame.index, pd.DatetimeIndex):
        frame.index.freq = freq.decode()
    return frame


def choose_codecs(frame: pd.DataFrame) -> dict[str, Codec]:
    """The smallest codec of each float64 column, formulas never forming a cycle.

    Which column carries the information and which are formulas of it depends on the order
    the columns choose in (``expected`` from ``lower``, or ``lower`` from ``expected``), so
    a few orders are tried and the smallest total kept."""
    floats = [c for c in frame.columns if frame[c].dtype == np.float64]
    if not floats:
        return {}
    arrays = {c: np.ascontiguousarray(frame[c].to_numpy()) for c in floats}
    lags = _grid_lags(frame.index)
    block = _block_rows(lags)
    decimals = {name: _decimals(arrays[name]) for name in floats}
    sizer = _Sizer(len(frame))
    same = {}  # a column repeated (one seasonal period) is sized once
    for name in floats:
        same.setdefault(arrays[name].tobytes(), name)
    distinct = list(same.values())
    options: dict[str, list[tuple[int, Codec]]] = {}
    for first in range(0, len(distinct), OWN_BATCH):
        names = distinct[first : first + OWN_BATCH]
        shared = _row_words(np.stack([arrays[name] for name in names]), lags)
        for i, name in enumerate(names):
            known = {codec: words[i] for codec, words in shared.items()}
            candidates = _own_candidates(arrays[name], block, decimals[name], known)
            options[name] = [(sizer.add(words), codec) for codec, words in candidates]
    stacked = np.stack([arrays[name] for name in floats])
    found = _formula_codecs(stacked, floats, [decimals[name] for name in floats])
    formula_options = {
        name: [(sizer.add(_formula_or_decimal_words(arrays, name, c)), c) for c in found[name]]
        for name in floats
    }
    sizes = sizer.measure()
    own = {  # the first of equal sizes
        name: min(((sizes[at], c) for at, c in options[same[arrays[name].tobytes()]]), key=_first)
        for name in floats
    }
    formulas = {name: [(sizes[at], c) for at, c in formula_options[name]] for name in floats}
    by_size = sorted(floats, key=lambda c: own[c][0])
    best: tuple[int, dict[str, Codec]] | None = None
    for order in (by_size, by_size[::-1], floats):
        total, chosen = _choose_in_order(order, own, formulas)
        if best is None or total < best[0]:
            best = (total, chosen)
    return {name: best[1][name] for name in floats} if best else {}


def _first(option: tuple[int, Codec]) -> int:
    return option[0]


def _own_candidates(
    x: np.ndarray, block: int, decimals: int | None, known: dict[Codec, np.ndarray]
) -> Iterator[tuple[Codec, np.ndarray]]:
    """Each own-row codec of ``x`` with the words it would store; ``known``: the words of
    the codecs that difference bit patterns (``_row_words``)."""
    words = dict(known)
    along = None
    for parity in (0, 1):
        codec = _alternate_codec(x, parity)
        if codec is not None:
            if along is None:  # the other rows' words are the same for either parity
                along = _zigzag(_diff(_diff(x.view(np.int64), 2), 2))
            words[codec] = _alternate_words(x, codec, along)
    rows = list(words)
    for codec in rows:
        yield codec, _grouped(words[codec], codec)
    if len(x) > block:
        codec = _blocks_codec(x, rows, block, words)
        yield codec, _grouped(_own_words(x, codec, words), codec)
    if decimals is not None:
        codec = Codec("decimal", number=float(decimals))
        yield codec, _own_words(_decimal_integers(x, codec).view(np.float64), Codec("previous"))


def _row_words(columns: np.ndarray, lags: list[int]) -> dict[Codec, np.ndarray]:
    """The words of every column (a row of ``columns``) under each codec that differences
    bit patterns (raw, previous, linear, cubic, lag), all columns at once: one row each."""
    bits = columns.view(np.int64)
    words = {Codec("raw"): bits.view(np.uint64)}
    steps = bits
    for kind in ("previous", "linear", "cubic"):  # each the difference of the one before
        steps = _diff(steps, 1)
        words[Codec(kind)] = _zigzag(steps)
    for lag in lags:
        words[Codec("lag", number=float(lag))] = _zigzag(_diff(bits, lag))
    return words


def _choose_in_order(
    order: list[str],
    own: dict[str, tuple[int, Codec]],
    formulas: dict[str, list[tuple[int, Codec]]],
) -> tuple[int, dict[str, Codec]]:
    chosen: dict[str, Codec] = {}
    total = 0
    for name in order:
        options = [(size, 0, codec) for size, codec in [own[name]]]
        for size, codec in formulas[name]:
            if any(name in _depends_on(ref, chosen) or ref == name for ref in codec.refs):
                continue
            # Equal sizes (exact formulas): prefer references already settled.
            options.append((size, sum(ref not in chosen for ref in codec.refs), codec))
        size, _, codec = min(options, key=lambda t: t[:2])
        chosen[name] = codec
        total += size
    return total, chosen


def decode_order(codecs: dict[str, Codec]) -> list[str]:
    """Column names so that every formula's references come before it."""
    done: list[str] = []

    def visit(name: str) -> None:
        if name in done or name not in codecs:
            return
        for ref in codecs[name].refs:
            visit(ref)
        done.append(name)

    for name in codecs:
        visit(name)
    return done


def _depends_on(name: str, chosen: dict[str, Codec]) -> set[str]:
    seen: set[str] = set()
    stack = [name]
    while stack:
        codec = chosen.get(stack.pop())
        for ref in codec.refs if codec else ():
            if ref not in seen:
                seen.add(ref)
                stack.append(ref)
    return seen


def _grid_lags(index: pd.Index) -> list[int]:
    """Rows per day and per week when the index is a regular time grid."""
    if not isinstance(index, pd.DatetimeIndex) or len(index) < 3:
        return []
    steps = np.diff(index.asi8)
    if steps[0] <= 0 or not (steps == steps[0]).all():
        return []
    per_day = pd.Timedelta(days=1).value // int(steps[0]) if steps[0] else 0
    return [lag for lag in (per_day, 7 * per_day) if 0 < lag < len(index)]


def _block_rows(lags: list[int]) -> int:
    """Rows per block of a ``blocks`` codec: whole days on a time grid (a day's seasonal
    pattern changes as a whole), at least MIN_BLOCK_ROWS."""
    if not lags:
        return MIN_BLOCK_ROWS
    return lags[0] * -(-MIN_BLOCK_ROWS // lags[0])


def _blocks_codec(
    x: np.ndarray, candidates: list[Codec], block: int, known: dict[Codec, np.ndarray] | None = None
) -> Codec:
    """Each block of ``block`` rows under its own smallest own-row codec: a seasonal pattern
    may repeat exactly for some days (lag) and change smoothly on others (differences).
    ``known``: words of the candidates already computed."""
    # A block's cost under each codec, estimated cheaply: the significant bits of its words.
    costs = _block_bits([_own_words(x, c, known) for c in candidates], block)
    chosen = [candidates[i] for i in np.argmin(costs, axis=0)]
    runs: list[tuple[Codec, int]] = []
    for codec in chosen:
        if runs and runs[-1][0] == codec:
            runs[-1] = (codec, runs[-1][1] + 1)
        else:
            runs.append((codec, 1))
    return Codec("blocks", number=float(block), runs=tuple(runs))


def _alternate_codec(x: np.ndarray, parity: int) -> Codec | None:
    """Rows of one parity as a fixed blend of the three rows before them, fitted here.

    A pattern read by linear interpolation between bin centres, two rows per bin, has
    every other row (nearly) determined by its three predecessors: for fractions of exactly
    1/4 and 3/4, ``3 y[i-1] - 3 y[i-2] + y[i-3]``. The weights are fitted as corrections to
    that blend (well conditioned), on the rows they fit best; the other rows are stored as
    second differences along their own parity."""
    first = 4 + (parity % 2)
    step = 2 * max(1, len(range(first, len(x), 2)) // FIT_ROWS)
    count = len(range(first, len(x), step))  # every step-th row from the first
    if count < 16:
        return None
    y0, y1, y2, y3 = (x[first - back :: step][:count] for back in range(4))
    basis = np.empty((count, 2))
    with np.errstate(invalid="ignore", over="ignore"):
        target = y0 - (3 * y1 - 3 * y2 + y3)
        np.subtract(y1, y2, out=basis[:, 0])
        np.subtract(y2, y3, out=basis[:, 1])
        # Finite sums: every value is finite, no row needs leaving out (and no copies).
        every = bool(np.isfinite(target.sum()) and np.isfinite(basis.sum()))
    ok = None if every else np.isfinite(target) & np.isfinite(basis).all(axis=1)
    if ok is not None and ok.sum() < 16:
        return None
    used = ok  # None: every row
    for _ in range(3):  # refit without the rows the blend does not describe
        fit = (basis, target) if used is None else (basis[used], target[used])
        (a, b), *_ = np.linalg.lstsq(*fit, rcond=None)
        with np.errstate(invalid="ignore", over="ignore"):
            misses = np.abs(basis @ np.array([a, b]) - target)
        kept = misses <= 5 * np.median(misses if ok is None else misses[ok])
        if ok is not None:
            kept &= ok
        kept_count = int(kept.sum())
        if kept_count < 16:
            return None
        kept = None if kept_count == count else kept
        if used is None or kept is None:
            if used is kept:  # every row again: the same fit
                break
        elif np.array_equal(kept, used):  # the same rows again: the same fit
            break
        used = kept
    coefs = (3.0 + float(a), -3.0 - float(a) + float(b), 1.0 - float(b))
    return Codec("alternate", number=float(parity % 2), coefs=coefs)


def _alternate_guess(codec: Codec, y1: np.ndarray, y2: np.ndarray, y3: np.ndarray):
    """The blend, 0 where it is not finite (so no NaN payload ever matters)."""
    alpha, beta, gamma = codec.coefs
    with np.errstate(invalid="ignore", over="ignore"):
        guess = alpha * y1 + beta * y2 + gamma * y3
    return np.where(np.isfinite(guess), guess, 0.0)


def _alternate_words(x: np.ndarray, codec: Codec, along: np.ndarray | None = None) -> np.ndarray:
    """``along``: the zigzagged second differences of ``x`` along each parity (the words of
    the rows that are not blended), when already computed."""
    if along is None:
        along = _zigzag(_diff(_diff(x.view(np.int64), 2), 2))
    words = along.copy()
    parity = int(codec.number)
    first = 4 - parity  # the first blended row with three rows before it
    count = len(range(first, len(x), 2))
    guess = _alternate_guess(
        codec, x[first - 1 :: 2][:count], x[first - 2 :: 2][:count], x[first - 3 :: 2][:count]
    )
    words[first::2] = x[first::2].view(np.uint64) ^ guess.view(np.uint64)
    words[parity : min(3, len(x)) : 2] = x[parity : min(3, len(x)) : 2].view(np.uint64)
    return words


def _undo_alternate(words: np.ndarray, codec: Codec) -> np.ndarray:
    """Row by row for the blended rows: each needs the one two rows before it. The rows of
    the other parity come first (cumulative sums), and their products with the weights are
    taken for all rows at once; the loop adds in the encoder's order."""
    parity = int(codec.number)
    steps = _unzigzag(words)
    steps[parity::2] = 0
    x = _cumsum(_cumsum(steps, 2), 2).view(np.float64)
    head = np.arange(parity, min(3, len(x)), 2)
    x[head] = words[head].view(np.float64)
    first = 4 - parity  # the first blended row with three rows before it
    if len(x) <= first:
        return x
    alpha, beta, gamma = codec.coefs
    count = len(x[first::2])
    with np.errstate(invalid="ignore", over="ignore"):
        before = (alpha * x[first - 1 :: 2][:count]).tolist()
        after = (gamma * x[first - 3 :: 2][:count]).tolist()
    stored = words[first::2].tolist()
    space = bytearray(8)  # one double seen as its word, to XOR its bits
    as_float, as_word = memoryview(space).cast("d"), memoryview(space).cast("Q")
    infinity = math.inf
    value = float(x[first - 2])
    values: list[float] = []
    append = values.append
    for one, three, word in zip(before, after, stored, strict=True):
        value = one + beta * value + three  # the guess, from the row two before
        if not -infinity < value < infinity:
            value = 0.0
        if word:  # the row is the guess with these bits flipped
            as_float[0] = value
            as_word[0] ^= word
            value = as_float[0]
        append(value)
    # Floats from a list keep their bits (NaN payloads included) on the way back.
    x[first::2] = np.array(values, dtype=np.float64)
    return x


def _decimals(x: np.ndarray) -> int | None:
    """The fewest decimals ``d`` with ``x == rint(x * 10**d) / 10**d`` bit for bit, where
    every missing value is the plain NaN; None when there is none up to MAX_DECIMALS."""
    finite = np.isfinite(x)
    missing = ~finite
    if (np.isinf(x)).any() or (x.view(np.uint64)[missing] != _NAN_BITS).any():
        return None
    values = x[finite]
    if (values == 0).any() and np.signbit(values[values == 0]).any():
        return None
    # A few values first, for every d at once: a d they refute is refuted (full precision
    # noise refutes them all). A d skipped could only have overflowed, and then so do all
    # larger ones.
    scales = 10.0 ** np.arange(MAX_DECIMALS + 1)[:, None]
    head = values[:DECIMALS_HEAD]
    with np.errstate(over="ignore", invalid="ignore"):
        back = np.rint(head * scales) / scales
    possible = (back.view(np.uint64) == head.view(np.uint64)).all(axis=1)
    for d in np.flatnonzero(possible).tolist():
        scale = 10.0**d
        n = np.rint(values * scale)
        if np.abs(n).max(initial=0) >= 2**53:
            return None
        if np.array_equal((n / scale).view(np.uint64), values.view(np.uint64)):
            return d
    return None


_NAN_BITS = np.array([np.nan]).view(np.uint64)[0]


def _formula_codecs(
    stacked: np.ndarray, names: list[str], decimals: list[int | None]
) -> dict[str, list[Codec]]:
    """Sums, differences and scaled sums of two columns of ``stacked`` (one row per name)
    that match most of a sample of a column exactly; and for a column of short decimals,
    every other column to store it near.

    Every pair is tested at once for several columns (those sharing a sample); the search
    for a pair's scale constant runs only where it could succeed (see ``_scalable``)."""
    found: dict[str, list[Codec]] = {name: [] for name in names}
    for columns, sample in _samples(stacked):
        rows = stacked[:, sample]
        with np.errstate(invalid="ignore", over="ignore"):
            differences = rows[:, None, :] - rows[None, :, :]  # (a, b, row)
            sums = rows[:, None, :] + rows[None, :, :]
        step = max(1, PAIR_CELLS // differences.size)
        for first in range(0, len(columns), step):
            chunk = columns[first : first + step]
            xs = rows[chunk]
            exact_differences = _shares(differences == xs[:, None, None, :]) >= EXACT_SHARE
            exact_sums = _shares(sums == xs[:, None, None, :]) >= EXACT_SHARE
            scalable = _scalable(xs, rows)
            for at, j in enumerate(chunk):
                name = names[j]
                if decimals[j] is not None:  # short decimals, stored near another column
                    number = float(decimals[j])
                    found[name] += [Codec("decimal", (r,), number) for r in names if r != name]
                for i, a in enumerate(names):
                    for ib, b in enumerate(names):
                        if ib == i:
                            continue
                        if exact_differences[at, i, ib]:
                            found[name].append(Codec("difference", (a, b)))
                        if ib > i and exact_sums[at, i, ib]:
                            found[name].append(Codec("sum", (a, b)))
                        if scalable[at, i, ib]:
                            found[name] += _scaled(xs[at], rows[i], rows[ib], (a, b))
    return found


def _samples(stacked: np.ndarray) -> list[tuple[list[int], np.ndarray | slice]]:
    """The columns tested on each sample: a column's first SAMPLE_ROWS finite rows (most
    columns share the first rows of the frame)."""
    finite = np.isfinite(stacked)
    head = min(stacked.shape[1], SAMPLE_ROWS)
    whole = finite[:, :head].all(axis=1)
    shared = [j for j in range(len(stacked)) if whole[j]]
    groups: list[tuple[list[int], np.ndarray | slice]] = []
    if shared and head:
        groups.append((shared, slice(0, head)))
    for j in range(len(stacked)):
        sample = np.flatnonzero(finite[j])[:SAMPLE_ROWS] if not whole[j] else ()
        if len(sample):
            groups.append(([j], sample))
    return groups


def _scaled(x: np.ndarray, a: np.ndarray, b: np.ndarray, refs: tuple[str, str]) -> list[Codec]:
    """``a + k * b`` as a one-codec list when it matches enough rows of ``x``, else empty."""
    k = _scale_of(x, a, b)
    if k is None:
        return []
    codec = Codec("scaled", refs, k)
    return [codec] if np.mean(_predict_formula(codec, a, b) == x) >= EXACT_SHARE else []


def _shares(matches: np.ndarray) -> np.ndarray:
    """The share of rows (the last axis) that match, as ``np.mean`` gives it."""
    return np.count_nonzero(matches, axis=-1) / matches.shape[-1]


def _scalable(xs: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """For every column of ``xs`` and every pair (a, b) of ``rows``: could ``_scale_of``
    find a ``k`` with ``x == a + k * b`` on at least EXACT_SHARE of the rows? False only
    where it cannot.

    Each candidate ``k`` lies within ``reach`` of the median ratio ``m``, and a row where
    ``a + k * b`` rounds to ``x`` has ``|x - a - m * b| <= reach * |b|`` plus a few units of
    rounding, bounded here very generously (1e-9 relative). Rows further off cannot match
    any candidate; a pair with too few rows left is not searched."""
    n = rows.shape[-1]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        rest = xs[:, None, :] - rows[None, :, :]  # (x, a, row): x - a
        values = rest[:, :, None, :] / rows[None, None, :, :]  # (x, a, b, row): the ratios
        valid = np.isfinite(values)  # b == 0 gives no finite ratio either
        counts = np.count_nonzero(valid, axis=-1)
        if not (counts == n).all():
            np.copyto(values, np.inf, where=~valid)
        median = _medians(values, counts)
        bits = median.view(np.int64)
        reach = np.maximum(
            np.abs((bits - SCALE_ULPS).view(np.float64) - median),
            np.abs((bits + SCALE_ULPS).view(np.float64) - median),
        )
        reach = np.maximum(reach, 1e-11 * np.abs(median) + 1e-300)  # 12 significant digits
        # allowed = 1e-9 * (|x| + |a| + |m| |b|) + reach |b| + 1e-300, in two passes
        fixed = 1e-9 * (np.abs(xs)[:, None, :] + np.abs(rows)[None, :, :]) + 1e-300
        per_b = 1e-9 * np.abs(median) + reach
        np.multiply(median[..., None], rows, out=values)  # m * b
        np.subtract(rest[:, :, None, :], values, out=values)
        miss = np.abs(values, out=values)
        allowed = per_b[..., None] * np.abs(rows)
        allowed += fixed[:, :, None, :]
        far = (miss > allowed) & (miss < np.inf)  # a NaN or infinite bound keeps the row
        near = (n - np.count_nonzero(far, axis=-1)) / n
    return (counts > 0) & (median != 0) & (near >= EXACT_SHARE)


def _medians(values: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """``np.median`` of the first ``counts`` values of each row (the last axis) once
    sorted, the others being +inf; ``values`` is reordered in place."""
    n = values.shape[-1]
    if (counts == n).all():
        values.partition(sorted({(n - 1) // 2, n // 2}), axis=-1)
    else:
        values.sort(axis=-1)
    lo_at = np.maximum(counts - 1, 0) // 2
    hi_at = np.minimum(counts // 2, n - 1)
    lo = np.take_along_axis(values, lo_at[..., None], axis=-1)[..., 0]
    hi = np.take_along_axis(values, hi_at[..., None], axis=-1)[..., 0]
    return np.where(counts % 2 == 1, lo, (lo + hi) / 2)


def _scale_of(x: np.ndarray, a: np.ndarray, b: np.ndarray) -> float | None:
    """The constant ``k`` of ``x = a + k * b`` that matches most rows bit for bit.

    ``k`` may be any double (a calibrated quantile), and the ratios ``(x - a) / b`` only
    come within a few units in its last place of it: the candidates are the doubles around
    their median, and the median rounded to 12 significant digits (a round constant)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ratios = (x - a) / b
    ratios = ratios[np.isfinite(ratios) & (b != 0)]
    if not len(ratios):
        return None
    median = float(np.median(ratios))
    if median == 0.0:
        return None
    nearby = np.array([median]).view(np.int64) + np.arange(-SCALE_ULPS, SCALE_ULPS + 1)
    candidates = np.append(nearby.view(np.float64), float(f"{median:.12g}"))
    for rows in (SCALE_ROWS, len(x)):  # a few rows first, then the ties on all of them
        with np.errstate(invalid="ignore", over="ignore"):
            guesses = a[None, :rows] + candidates[:, None] * b[None, :rows]
        matches = (guesses == x[None, :rows]).sum(axis=1)
        candidates = candidates[matches == matches.max()]
    k = float(candidates[0])
    return k if k not in (0.0, 1.0, -1.0) else None


def _predict_formula(codec: Codec, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", over="ignore"):
        if codec.kind == "sum":
            return a + b
        if codec.kind == "difference":
            return a - b
        return a + codec.number * b


def _own_words(
    x: np.ndarray, codec: Codec, known: dict[Codec, np.ndarray] | None = None
) -> np.ndarray:
    """The stored words of an own-row codec: differences of the bit patterns taken as
    integers (wrapping), zigzagged so small negative steps are small words too. Smooth
    doubles of one sign and exponent have nearly evenly spaced bit patterns, so a line's
    second difference is a few units; and unlike a float prediction, this one decodes with
    cumulative sums instead of a loop. ``known``: words of ``x`` already computed, by codec
    (read, never changed)."""
    if known is not None and codec in known:
        return known[codec]
    bits = x.view(np.int64)
    if codec.kind == "raw":
        return bits.view(np.uint64).copy()
    if codec.kind == "blocks":
        return _blocks_words(x, codec, known)
    if codec.kind == "alternate":
        return _alternate_words(x, codec)
    if codec.kind == "lag":
        steps = _diff(bits, int(codec.number))
    else:
        steps = bits
        for _ in range(codec.reach):
            steps = _diff(steps, 1)
    return _zigzag(steps)


def _undo_own(words: np.ndarray, codec: Codec) -> np.ndarray:
    if codec.kind == "raw":
        return words.view(np.float64).copy()
    if codec.kind == "blocks":
        return _undo_blocks(words, codec)
    if codec.kind == "alternate":
        return _undo_alternate(words, codec)
    steps = _unzigzag(words)
    if codec.kind == "lag":
        bits = _cumsum(steps, int(codec.number))
    else:
        bits = steps
        for _ in range(codec.reach):
            bits = _cumsum(bits, 1)
    return bits.view(np.float64)


def _run_bounds(codec: Codec, n: int) -> Iterator[tuple[Codec, int, int]]:
    start, block = 0, int(codec.number)
    for part, count in codec.runs:
        end = min(n, start + count * block)
        yield part, start, end
        start = end


def _block_bits(candidates: list[np.ndarray], block: int) -> np.ndarray:
    """Significant bits per block of ``block`` rows (the words' byte layout aside), for each
    candidate's words: candidates x blocks. A last, partial block counts as if padded with
    zero words."""
    bits = np.stack(candidates, dtype=np.float64)
    bits += 1.0
    np.log2(bits, out=bits)
    whole = bits.shape[1] // block * block
    costs = bits[:, :whole].reshape(len(bits), -1, block).sum(axis=2)
    if whole == bits.shape[1]:
        return costs
    tail = np.zeros((len(bits), block))
    tail[:, : bits.shape[1] - whole] = bits[:, whole:]
    return np.concatenate([costs, tail.sum(axis=1)[:, None]], axis=1)


def _shifted(codec: Codec, start: int) -> Codec:
    """An ``alternate`` codec's parity for rows counted from ``start``."""
    if codec.kind != "alternate":
        return codec
    return replace(codec, number=float((int(codec.number) - start) % 2))


def _grouped(words: np.ndarray, codec: Codec, *, undo: bool = False) -> np.ndarray:
    """How own-row words are laid out in the file: an ``alternate`` stretch keeps its two
    parities apart (small blend errors together, second differences together), which
    compresses far better than interleaved; ``undo`` restores the row order."""
    if codec.kind == "alternate":
        parts = [(codec, 0, len(words))]
    elif codec.kind == "blocks":
        parts = [p for p in _run_bounds(codec, len(words)) if p[0].kind == "alternate"]
    else:
        return words
    if codec.kind == "alternate" and not undo:
        blended = int(codec.number) % 2
        return np.concatenate([words[1 - blended :: 2], words[blended::2]])
    out = words.copy()
    for part, start, end in parts:
        blended = (int(part.number) - start) % 2
        other = start + 1 - blended  # the first row of the parity stored first
        if undo:
            count = len(range(other, end, 2))
            out[other:end:2] = words[start : start + count]
            out[start + blended : end : 2] = words[start + count : end]
        else:
            out[start:end] = np.concatenate([words[other:end:2], words[start + blended : end : 2]])
    return out


def _blocks_words(
    x: np.ndarray, codec: Codec, known: dict[Codec, np.ndarray] | None = None
) -> np.ndarray:
    known = dict(known or {})  # each part's words computed once, however many runs it has
    bounds = list(_run_bounds(codec, len(x)))
    for part, _, _ in bounds:
        if part not in known:
            known[part] = _own_words(x, part)
    parts = list(dict.fromkeys(part for part, _, _ in bounds))
    if not parts or bounds[-1][2] < len(x):  # runs that do not cover the column
        words = np.zeros(len(x), dtype=np.uint64)
        for part, start, end in bounds:
            words[start:end] = known[part][start:end]
        return words
    # Every row from its run's part, in one pass.
    which = np.repeat([parts.index(p) for p, _, _ in bounds], [e - s for _, s, e in bounds])
    return np.choose(which, [known[part] for part in parts])


def _undo_blocks(words: np.ndarray, codec: Codec) -> np.ndarray:
    """Decodes run after run, each run's codec continuing from the decoded rows before it:
    differences and lags by running sums from those rows (integers, wrapping); an alternate
    run (or differences from the first row) by encoding the rows it reads back and the
    run's stored words, then undoing both."""
    bits = np.empty(len(words), dtype=np.int64)
    x = bits.view(np.float64)
    steps = _unzigzag(words)
    for part, start, end in _run_bounds(codec, len(words)):
        if part.kind == "raw":
            bits[start:end] = words[start:end].view(np.int64)
        elif part.kind == "lag":
            _undo_lag(bits, steps, int(part.number), start, end)
        elif part.kind in ("previous", "linear", "cubic") and start >= part.reach:
            _undo_differences(bits, steps, part.reach, start, end)
        else:
            before = min(start, part.reach)
            part = _shifted(part, start - before)  # parity counted from the local first row
            local = np.concatenate([x[start - before : start], np.zeros(end - start)])
            local = _own_words(local, part)
            local[before:] = words[start:end]
            x[start:end] = _undo_own(local, part)[before:]
    return x


def _undo_lag(bits: np.ndarray, steps: np.ndarray, lag: int, start: int, end: int) -> None:
    """Rows ``start:end`` of a ``lag`` codec, in place: the first ``lag`` rows of the column
    are stored as they are, every later one as its step from the row ``lag`` before."""
    if start < min(end, lag):
        bits[start : min(end, lag)] = steps[start : min(end, lag)]
    for first in range(max(start, lag), end, lag):  # a lag at a time: rows before are done
        last = min(end, first + lag)
        np.add(bits[first - lag : last - lag], steps[first:last], out=bits[first:last])


def _undo_differences(
    bits: np.ndarray, steps: np.ndarray, reach: int, start: int, end: int
) -> None:
    """Rows ``start:end`` (``start >= reach``) of a codec storing ``reach``-th differences,
    in place: each order's running sum from its value at the row before ``start``."""
    level = bits[start - reach : start]
    heads = []  # the 0th, 1st, ... difference at row start - 1
    for _ in range(reach):
        heads.append(level[-1])
        level = level[1:] - level[:-1]
    level = steps[start:end]
    for head in reversed(heads):
        level = np.cumsum(level)
        level += head
    bits[start:end] = level


def _zigzag(steps: np.ndarray) -> np.ndarray:
    """Signed steps as unsigned words, small in magnitude either way: 0, -1, 1, -2 ..."""
    return ((steps << 1) ^ (steps >> 63)).view(np.uint64)


def _unzigzag(words: np.ndarray) -> np.ndarray:
    return ((words >> np.uint64(1)) ^ (np.uint64(0) - (words & np.uint64(1)))).view(np.int64)


def _diff(a: np.ndarray, lag: int) -> np.ndarray:
    """Each row minus the one ``lag`` before it (wrapping), along the last axis; the first
    ``lag`` rows as they are."""
    out = a.copy()
    np.subtract(a[..., lag:], a[..., :-lag], out=out[..., lag:])
    return out


def _cumsum(a: np.ndarray, lag: int) -> np.ndarray:
    """Undoes ``_diff``: a running sum over every ``lag``-th row."""
    n = len(a)
    rows = -(-n // lag)
    padded = np.zeros(rows * lag, dtype=np.int64)
    padded[:n] = a
    with np.errstate(over="ignore"):
        return np.cumsum(padded.reshape(rows, lag), axis=0).reshape(-1)[:n]


def _formula_words(arrays: dict[str, np.ndarray], name: str, codec: Codec) -> np.ndarray:
    a, b = (arrays[r] for r in codec.refs)
    guess = np.ascontiguousarray(_predict_formula(codec, a, b), dtype=np.float64)
    return arrays[name].view(np.uint64) ^ guess.view(np.uint64)


def _decimal_integers(x: np.ndarray, codec: Codec) -> np.ndarray:
    return np.rint(np.nan_to_num(x) * 10.0**codec.number).astype(np.int64)


def _reference_integers(ref: np.ndarray, codec: Codec) -> np.ndarray:
    """The reference column in the same decimals, rounded (0 where it is not finite or too
    large): decimals stored as their distance from it are small numbers."""
    scaled = ref * 10.0**codec.number
    usable = np.isfinite(scaled) & (np.abs(scaled) < 2.0**52)
    return np.rint(np.where(usable, scaled, 0.0)).astype(np.int64)


def _decimal_words(arrays: dict[str, np.ndarray], name: str, codec: Codec) -> np.ndarray:
    """A ``decimal`` column near a reference: the zigzagged distance, in its last decimal,
    from the rounded reference."""
    steps = _decimal_integers(arrays[name], codec) - _reference_integers(
        arrays[codec.refs[0]], codec
    )
    return _zigzag(steps)


def _encode_column(
    frame: pd.DataFrame, name: str, codec: Codec
) -> np.ndarray | pd.api.extensions.ExtensionArray:
    x = np.ascontiguousarray(frame[name].to_numpy(), dtype=np.float64)
    arrays = {r: np.ascontiguousarray(frame[r].to_numpy()) for r in codec.refs}
    if codec.kind == "decimal" and codec.refs:
        words = _decimal_words({**arrays, name: x}, name, codec)
        return pd.arrays.IntegerArray(words.view(np.int64), np.isnan(x))
    if codec.kind == "decimal":
        return pd.arrays.IntegerArray(_decimal_integers(x, codec), np.isnan(x))
    if codec.refs:
        words = _formula_words({**arrays, name: x}, name, codec)
    else:
        words = _grouped(_own_words(x, codec), codec)
    return words.view(np.int64)


def _decode_column(frame: pd.DataFrame, name: str, codec: Codec) -> np.ndarray:
    if codec.kind == "decimal":
        stored = frame[name]
        missing = stored.isna().to_numpy()
        if codec.refs:
            words = stored.to_numpy(dtype=np.int64, na_value=0).view(np.uint64)
            steps = _unzigzag(words)
            ref = np.ascontiguousarray(frame[codec.refs[0]].to_numpy(), dtype=np.float64)
            n = (steps + _reference_integers(ref, codec)).astype(np.float64)
        else:
            n = stored.to_numpy(dtype=np.float64, na_value=np.nan)
        return np.where(missing, np.nan, n / 10.0**codec.number)
    words = np.ascontiguousarray(frame[name].to_numpy(dtype=np.int64)).view(np.uint64)
    if codec.refs:
        a, b = (np.ascontiguousarray(frame[r].to_numpy(), dtype=np.float64) for r in codec.refs)
        guess = np.ascontiguousarray(_predict_formula(codec, a, b), dtype=np.float64)
        return (words ^ guess.view(np.uint64)).view(np.float64)
    return _undo_own(_grouped(words, codec, undo=True), codec)


def _formula_or_decimal_words(arrays: dict[str, np.ndarray], name: str, codec: Codec) -> np.ndarray:
    if codec.kind == "decimal":
        return _decimal_words(arrays, name, codec)
    return _formula_words(arrays, name, codec)


class _Sizer:
    """Compressed sizes of candidate words: stretches spread over the column (a codec may
    suit only some of it, see blocks), each stored as Parquet stores a column chunk,
    BYTE_STREAM_SPLIT (byte planes) with zstd. The candidates are gathered (Arrow slices of
    their words, no copies) and measured together, SIZE_BATCH to one Parquet write: a few
    calls instead of one compression per stretch of each candidate."""

    def __init__(self, rows: int) -> None:
        if rows <= SIZE_ROWS:
            self.starts, self.stretch = [0], max(rows, 1)
        else:
            self.stretch = SIZE_ROWS // SIZE_STRETCHES
            starts = np.linspace(0, rows - self.stretch, SIZE_STRETCHES).astype(np.int64)
            self.starts = starts.tolist()
        self.pending: list[pa.ChunkedArray] = []
        self.sizes: list[int] = []

    def add(self, words: np.ndarray) -> int:
        """Where the size of ``words`` will be in ``measure``'s answer."""
        whole = pa.array(np.ascontiguousarray(words).view(np.int64))  # no copy
        self.pending.append(pa.chunked_array([whole.slice(s, self.stretch) for s in self.starts]))
        if len(self.pending) == SIZE_BATCH:
            self.sizes += self._measure(self.pending)
            self.pending = []
        return len(self.sizes) + len(self.pending) - 1

    def measure(self) -> list[int]:
        """The compressed bytes of each candidate added, page headers left out."""
        if self.pending:
            self.sizes += self._measure(self.pending)
            self.pending = []
        return self.sizes

    def _measure(self, candidates: list[pa.ChunkedArray]) -> list[int]:
        names = [str(i) for i in range(len(candidates))]
        schema = pa.schema([pa.field(n, pa.int64(), nullable=False) for n in names])
        buffer = pa.BufferOutputStream()
        pq.write_table(
            pa.Table.from_arrays(candidates, schema=schema),
            buffer,
            compression="zstd",
            compression_level=SIZE_LEVEL,
            use_dictionary=False,
            column_encoding=dict.fromkeys(names, "BYTE_STREAM_SPLIT"),
            write_statistics=False,
            row_group_size=self.stretch,  # one row group, one page, per stretch
            max_rows_per_page=self.stretch,
            data_page_size=16 * self.stretch,
            store_schema=False,
        )
        metadata = pq.ParquetFile(pa.BufferReader(buffer.getvalue())).metadata
        sizes = [0] * len(candidates)
        for group in range(metadata.num_row_groups):
            chunks = metadata.row_group(group)
            for i in range(len(candidates)):
                chunk = chunks.column(i)
                # Both totals count the page header; the uncompressed page is 8 bytes a row.
                header = chunk.total_uncompressed_size - 8 * chunk.num_values
                sizes[i] += chunk.total_compressed_size - header
        return sizes
