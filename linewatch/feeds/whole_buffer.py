"""The whole-buffer path: many complete lines of a wide or long CSV converted at once.

The common case (printable ASCII rows without quotes, the header's number of fields, plain
decimal numbers) is converted with numpy; every other row goes through `RowParser.feed_line`,
and both are merged back in file order, so the result is the per-line path's (a property test
holds them equal). `check` reads whole files this way; a live tail's blocks of at least
FAST_BLOCK_BYTES take it too.
"""

from __future__ import annotations

import codecs
from collections.abc import Callable

import numpy as np

from linewatch.feeds.batch import Batch, BatchBuilder, TimeColumn
from linewatch.feeds.row_parser import MAX_LINE_BYTES, RowParser
from linewatch.feeds.values import parse_number

FAST_BLOCK_BYTES = 32 << 10  # blocks at least this large take the whole-buffer path


def parse_block(parser: RowParser, data: bytes, first_line_no: int,
                fast_from: int = FAST_BLOCK_BYTES) -> Batch:
    """Parse complete lines given as one buffer, each ending in a newline, numbered from
    `first_line_no`. A block of a wide or long feed of at least `fast_from` bytes goes through
    the whole-buffer path (same result, far faster)."""
    if len(data) >= fast_from and parser.feed.layout in ("wide", "long"):
        return read_buffer(data, parser, first_line_no - 1)
    lines = data.split(b"\n")
    if lines and lines[-1] == b"":
        lines.pop()
    return parser.parse(lines, first_line_no)


def _line_by_line(data: bytes, lo: int, line_no: int, parser: RowParser, out: BatchBuilder,
                  until_ready: bool = False) -> tuple[int, int]:
    """Feed the lines of `data` from byte `lo` to the per-line parser (only until it is ready,
    with `until_ready`); returns where it stopped and the last line number."""
    while lo < len(data) and not (until_ready and parser.ready):
        end = data.index(b"\n", lo)
        line_no += 1
        parser.feed_line(data[lo:end], line_no, out)
        lo = end + 1
    return lo, line_no


def _read_whole(data: bytes, parser: RowParser, lines_before: int,
                fast_ok: Callable[[RowParser], bool],
                fast: type[_FastWide] | type[_FastLong]) -> Batch:
    """The header (and whatever the parser needs before it is ready) line by line, then the
    rest through `fast` when the encoding is ASCII-compatible and `fast_ok` says the columns
    allow it, else line by line."""
    if data and not data.endswith(b"\n"):
        data += b"\n"
    prefix = BatchBuilder(parser.file)
    lo, line_no = _line_by_line(data, 0, lines_before, parser, prefix, until_ready=True)
    plain = codecs.lookup(parser.feed.encoding).name in _ASCII_COMPATIBLE
    if lo >= len(data) or not parser.usable or not plain or not fast_ok(parser):
        _line_by_line(data, lo, line_no, parser, prefix)
        return prefix.batch()
    return fast(data, lo, line_no, parser).run(prefix)


def _wide_fast_ok(p: RowParser) -> bool:
    # a header repeat must never look like a row of numbers to the fast path
    if p.text_idx:  # rows with kept text columns go the per-line way
        return False
    return bool(p.wanted) and not any(
        parse_number(name, p.decimal_comma) is not None for name, _ in p.wanted or [])


def _long_fast_ok(p: RowParser) -> bool:
    # a header repeat must never look like a row with a number to the fast path
    return p.header is not None and parse_number(p.header[p.value_idx], p.decimal_comma) is None


def read_buffer(data: bytes, parser: RowParser, lines_before: int = 0) -> Batch:
    """The lines of a wide or long CSV (`data`, after `lines_before` lines): plain rows as
    whole arrays, the rest line by line (same result). A last line without a newline is a
    row (a finished file)."""
    if parser.feed.layout == "long":
        return _read_whole(data, parser, lines_before, _long_fast_ok, _FastLong)
    return _read_whole(data, parser, lines_before, _wide_fast_ok, _FastWide)


_NAME_BYTES = 64  # longer names take the per-line path


class _WholeBuffer:
    """A buffer of complete lines from byte `lo` on, numbered after `lines_before`."""

    def __init__(self, data: bytes, lo: int, lines_before: int, parser: RowParser) -> None:
        self.data = data
        self.arr = np.frombuffer(data, dtype=np.uint8)
        self.lo = lo
        self.lines_before = lines_before
        self.parser = parser


class _FastLong(_WholeBuffer):
    """Whole-buffer conversion of the plain rows of a long-layout CSV.

    A row takes the fast path when it is printable ASCII without quotes, does not start with a
    blank or '#', has the header's number of fields, a name without surrounding blanks and a
    plain decimal value; every other row goes through `RowParser.feed_line`, so both agree.
    """

    def _names(self, s: np.ndarray, e: np.ndarray, ok: np.ndarray) -> np.ndarray:
        """Each row's name as fixed-width bytes (rows not `ok` get b'')."""
        lens = np.where(ok, e - s, 0)
        width = max(1, int(lens.max(initial=0)))
        mat = np.zeros((len(s), width), dtype=np.uint8)
        for j in range(width):
            col = np.take(self.arr, s + j, mode="clip")
            col[lens <= j] = 0
            mat[:, j] = col
        return mat.view(f"S{width}").ravel()

    def run(self, prefix: BatchBuilder) -> Batch:
        p = self.parser
        starts, nl, ends, base, pos, self.slow = _line_table(self.arr, self.lo, p)
        fast = np.flatnonzero(~self.slow)
        fs, fe, fb = starts[fast], ends[fast], base[fast]
        assert p.header is not None
        ncols = len(p.header)
        ns, ne = _field_span(p.name_idx, ncols, fs, fe, fb, pos)
        vs, ve = _field_span(p.value_idx, ncols, fs, fe, fb, pos)
        if p.time_idx is not None and p.keep_times:
            ts, te = _field_span(p.time_idx, ncols, fs, fe, fb, pos)
        else:
            ts = te = np.zeros(len(fast), dtype=np.int64)
        del pos
        arr = self.arr
        nlen = ne - ns
        ok = (nlen > 0) & (nlen <= _NAME_BYTES)
        ok &= ~np.isin(np.take(arr, ns, mode="clip"), (32, 9))
        ok &= ~np.isin(np.take(arr, np.maximum(ne - 1, 0), mode="clip"), (32, 9))
        vals, good = _convert(arr, vs, ve, p.decimal_comma)
        ok &= good
        self.slow[fast[~ok]] = True
        keep = np.flatnonzero(ok)
        fast, vals = fast[keep], vals[keep]
        ns, ne, ts, te = ns[keep], ne[keep], ts[keep], te[keep]
        first_no = self.lines_before + 1
        fast_lines = fast + first_no
        names = self._names(ns, ne, np.ones(len(fast), dtype=bool))
        # the unusual rows, line by line through the same code as RowParser; note where each
        # name was first seen so names_seen keeps the order of the file
        rest = BatchBuilder(p.file)
        known = list(p.names_seen)  # met before this buffer: they keep their place
        seen_at: dict[str, int] = {}
        data = self.data
        for i in np.flatnonzero(self.slow).tolist():
            before = len(p.names_seen)
            p.feed_line(data[starts[i] : nl[i]], i + first_no, rest)
            if len(p.names_seen) != before:
                seen_at[next(reversed(p.names_seen))] = i + first_no
        uniq, first_idx, inverse = np.unique(names, return_index=True, return_inverse=True)
        decoded = [u.decode("ascii") for u in uniq.tolist()]
        old = set(known)
        for k, name in enumerate(decoded):
            if name not in old:
                line = int(fast_lines[first_idx[k]])
                seen_at[name] = min(line, seen_at.get(name, line))
        order = sorted(seen_at, key=seen_at.__getitem__)
        p.names_seen = {**dict.fromkeys(known), **dict.fromkeys(order)}
        return self._merge(prefix, rest, decoded, inverse, fast_lines, vals, ts, te)

    def _merge(self, prefix: BatchBuilder, rest: BatchBuilder, decoded: list[str],
               inverse: np.ndarray, fast_lines: np.ndarray, vals: np.ndarray, ts: np.ndarray,
               te: np.ndarray) -> Batch:
        """Per name: prefix rows, then fast rows with the line-by-line rows put back in order."""
        p = self.parser
        wanted = None if p.columns is None else set(p.columns)
        batch = Batch(file=p.file, rejected=prefix.rejected + rest.rejected,
                      notices=prefix.notices + rest.notices, unread=prefix.unread + rest.unread)
        batch.rows = prefix.rows + rest.rows
        groups = np.argsort(inverse, kind="stable")
        bounds = np.searchsorted(inverse[groups], np.arange(len(decoded) + 1))
        fast_rows: dict[str, np.ndarray] = {}
        for k, name in enumerate(decoded):
            if wanted is None or name in wanted:
                fast_rows[name] = groups[bounds[k] : bounds[k + 1]]
                batch.rows += len(fast_rows[name])
        names = set(fast_rows) | set(rest.values) | set(prefix.values)
        first_line: dict[str, int] = {}
        for name in names:
            cands = [int(fast_lines[fast_rows[name][0]])] if name in fast_rows else []
            cands += rest.lines.get(name, [])[:1] + prefix.lines.get(name, [])[:1]
            first_line[name] = min(cands)
        for name in sorted(names, key=first_line.__getitem__):
            rows = fast_rows.get(name, np.zeros(0, dtype=np.int64))
            f_lines = fast_lines[rows]
            slow_l = np.asarray(rest.lines.get(name, []), dtype=np.int64)
            at = np.searchsorted(f_lines, slow_l)
            lines = np.insert(f_lines, at, slow_l)
            v = np.insert(vals[rows], at, np.asarray(rest.values.get(name, []), dtype=np.float64))
            s, e = np.insert(ts[rows], at, 0), np.insert(te[rows], at, 0)
            extra: dict[int, str | None] = {}
            pre_l, pre_t = prefix.lines.get(name, []), prefix.times.get(name, [])
            npre = len(pre_l)
            for j, t in enumerate(pre_t):
                extra[j] = t
            for k, (at_k, t) in enumerate(zip(at.tolist(), rest.times.get(name, []), strict=True)):
                extra[npre + at_k + k] = t
            if npre:
                lines = np.concatenate([np.asarray(pre_l, dtype=np.int64), lines])
                v = np.concatenate([np.asarray(prefix.values[name], dtype=np.float64), v])
                pad = np.zeros(npre, dtype=np.int64)
                s, e = np.concatenate([pad, s]), np.concatenate([pad, e])
            batch.values[name] = v
            batch.lines[name] = lines
            batch.times[name] = TimeColumn(buf=self.data, starts=s, ends=e, extra=extra)
        batch.rejected.sort(key=lambda r: r.line)
        return batch


_ASCII_COMPATIBLE = frozenset(
    {"utf-8", "ascii", "latin-1", "iso8859-1", "cp1252", "iso8859-15", "cp1250", "cp1251",
     "utf-8-sig"}
)
_NUM_LUT = np.zeros(256, dtype=bool)
_NUM_LUT[list(b"0123456789.+-")] = True
_NUM_LUT[0] = True
_FAST_FIELD = 24
_POW10 = 10.0 ** np.arange(23)


class _FastWide(_WholeBuffer):
    """Whole-buffer conversion of the plain rows of a wide CSV; the rest go line by line.

    A row takes the fast path when it is printable ASCII without quotes, does not start with a
    blank or '#', has exactly the header's number of fields and its wanted values are plain
    decimals; every other row goes through `RowParser.feed_line`, so both paths agree.
    """

    def run(self, prefix: BatchBuilder) -> Batch:
        p = self.parser
        assert p.header is not None and p.wanted is not None
        ncols = len(p.header)
        arr = self.arr
        starts, nl, ends, base, pos, slow = _line_table(arr, self.lo, p)
        fast = np.flatnonzero(~slow)
        fbase = base[fast]
        del base
        fstarts, fends = starts[fast], ends[fast]
        time_idx = p.time_idx if p.keep_times else None
        spans = [_field_span(j, ncols, fstarts, fends, fbase, pos)
                 for j in [j for _, j in p.wanted]
                 + ([time_idx] if time_idx is not None else [])]
        ts: np.ndarray | None = None
        te: np.ndarray | None = None
        if time_idx is not None:
            ts, te = spans.pop()
        del fstarts, fends
        del pos, fbase, ends
        ok = np.ones(len(fast), dtype=bool)
        converted: list[np.ndarray] = []
        for k in range(len(spans)):
            s, e = spans[k]
            spans[k] = (s[:0], s[:0])  # let each span go once converted
            vals, good = _convert(arr, s, e, p.decimal_comma)
            del s, e
            ok &= good
            converted.append(vals)
        if not ok.all():
            slow[fast[~ok]] = True
            fast = fast[ok]
            if ts is not None and te is not None:
                ts, te = ts[ok], te[ok]
            converted = [c[ok] for c in converted]
        first_no = self.lines_before + 1
        fast_lines = fast + first_no
        # the unusual rows, line by line through the same code as RowParser
        rest = BatchBuilder(p.file)
        data = self.data
        for i in np.flatnonzero(slow).tolist():
            p.feed_line(data[starts[i] : nl[i]], i + first_no, rest)
        return _merge(prefix, rest, p, fast_lines, converted, data, ts, te)


def _line_table(
    arr: np.ndarray, lo: int, p: RowParser
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The lines of `arr` from `lo`: (starts, newline positions, ends without a CR, index in
    `pos` of each line's first delimiter, `pos` = the newlines and delimiters in order, and a
    mask of the lines that need the per-line path: a field count other than the header's,
    empty, starting with '#' or a blank, too long, or holding a byte the fast path leaves
    alone)."""
    assert p.header is not None
    ncols = len(p.header)
    pos, odd_pos = _scan(arr, lo, ord(p.delimiter))
    nlk = np.flatnonzero(arr[pos] == 10)
    nl = pos[nlk]
    n = len(nl)
    starts = np.empty(n, dtype=pos.dtype)
    starts[0] = lo
    starts[1:] = nl[:-1] + 1
    base = np.empty(n, dtype=pos.dtype)  # index in pos of each line's first delimiter
    base[0] = 0
    base[1:] = nlk[:-1] + 1
    slow = (nlk - base) != ncols - 1
    del nlk
    ends = nl.copy()
    cr_end = (ends > starts) & (arr[np.maximum(ends - 1, 0)] == 13)
    ends -= cr_end
    del cr_end
    first = arr[np.minimum(starts, len(arr) - 1)]
    slow |= (ends == starts) | (first == 35) | (first == 32) | (first == 9)
    slow |= (ends - starts) > MAX_LINE_BYTES
    if len(odd_pos):
        slow[np.searchsorted(starts, odd_pos, side="right") - 1] = True
    return starts, nl, ends, base, pos, slow


def _field_span(j: int, ncols: int, starts: np.ndarray, ends: np.ndarray, base: np.ndarray,
                pos: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Byte spans of field `j` of the lines given by starts, ends and `base` (see
    `_line_table`)."""
    last = len(pos) - 1
    s = starts if j == 0 else pos[np.minimum(base + j - 1, last)] + 1
    e = ends if j == ncols - 1 else pos[np.minimum(base + j, last)]
    return s, e


_SCAN_BLOCK = 1 << 22


def _scan(arr: np.ndarray, lo: int, delim: int) -> tuple[np.ndarray, np.ndarray]:
    """Positions of newlines and delimiters from `lo` on, and of bytes that need the per-line
    path (controls, non-ASCII, quotes; a \r just before a newline is fine). Works block by
    block so no temporary is as large as the file."""
    pos_parts: list[np.ndarray] = []
    odd_parts: list[np.ndarray] = []
    last = len(arr) - 1
    kind = np.int32 if len(arr) < 2**31 - 1 else np.int64  # halves the memory of big logs
    for b0 in range(lo, len(arr), _SCAN_BLOCK):
        blk = arr[b0 : b0 + _SCAN_BLOCK]
        sep = blk == 10
        sep |= blk == delim
        pos_parts.append((np.flatnonzero(sep) + b0).astype(kind))
        odd = (blk - np.uint8(32)) > 94
        odd |= blk == 34
        odd &= ~sep
        if odd.any():
            op = np.flatnonzero(odd) + b0
            op = op[~((arr[op] == 13) & (arr[np.minimum(op + 1, last)] == 10))]
            odd_parts.append(op)
    empty = np.zeros(0, dtype=kind)
    pos = np.concatenate(pos_parts) if pos_parts else empty
    return pos, (np.concatenate(odd_parts) if odd_parts else empty)


def _convert(
    arr: np.ndarray, s: np.ndarray, e: np.ndarray, decimal_comma: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Plain decimal numbers between byte spans -> (float64 values, convertible mask).

    Values are exact: an integer mantissa of at most 15 digits divided by a power of ten is
    correctly rounded, as Python's float() is. Anything else (exponents, long numbers, text) is
    left to the per-line path by a False in the mask. Works column by column (Horner's scheme)
    so memory stays a few arrays of the row count.
    """
    n = len(s)
    lens = e - s
    width = int(min(lens.max(initial=0), _FAST_FIELD))
    good = (lens > 0) & (lens <= width)
    mant = np.zeros(n, dtype=np.int64)
    frac = np.zeros(n, dtype=np.int8)
    ndig = np.zeros(n, dtype=np.int8)
    seen_dot = np.zeros(n, dtype=bool)
    neg = np.zeros(n, dtype=bool)
    for j in range(width):
        c = np.take(arr, s + j, mode="clip")
        c[lens <= j] = 0
        if decimal_comma:
            c[c == 44] = 46
        good &= _NUM_LUT[c]
        d = c - np.uint8(48)
        isd = d < 10
        if j == 0:
            neg = c == 45
        else:
            good &= (c != 45) & (c != 43)
        dot = c == 46
        good &= ~(dot & seen_dot)
        seen_dot |= dot
        np.multiply(mant, 10, out=mant, where=isd)
        np.add(mant, d, out=mant, where=isd, casting="unsafe")
        frac += isd & seen_dot
        ndig += isd
    good &= (ndig >= 1) & (ndig <= 15)  # so |value| < 1e15, always within MAX_MAGNITUDE
    vals = mant.astype(np.float64)
    vals /= _POW10[frac]
    np.negative(vals, out=vals, where=neg)
    return vals, good


def _merge(
    prefix: BatchBuilder,
    rest: BatchBuilder,
    p: RowParser,
    fast_lines: np.ndarray,
    converted: list[np.ndarray],
    data: bytes,
    ts: np.ndarray | None,
    te: np.ndarray | None,
) -> Batch:
    """Prefix rows, then fast rows with the line-by-line rows put back in file order.

    In the wide layout a row gives every wanted column or none, so all characteristics share
    one set of lines and one TimeColumn (`ts`, `te` None: no times were read).
    """
    assert p.wanted is not None
    batch = Batch(file=p.file, rejected=prefix.rejected + rest.rejected,
                  notices=prefix.notices + rest.notices, unread=prefix.unread + rest.unread)
    batch.rows = prefix.rows + rest.rows + len(fast_lines)
    key = p.wanted[0][0]
    pre_l = prefix.lines.get(key, [])
    pre_t = prefix.times.get(key, [])
    slow_l = np.asarray(rest.lines.get(key, []), dtype=np.int64)
    slow_t = rest.times.get(key, [])
    npre = len(pre_l)
    at = np.searchsorted(fast_lines, slow_l)
    # a clean file has no line-by-line rows: nothing to put back, no copy
    lines = np.insert(fast_lines, at, slow_l) if len(at) else fast_lines
    if npre:
        lines = np.concatenate([np.asarray(pre_l, dtype=np.int64), lines])
    if len(lines) == 0:
        return batch
    if ts is None or te is None:
        times = TimeColumn([None] * len(lines))
    else:
        s, e = (np.insert(ts, at, 0), np.insert(te, at, 0)) if len(at) else (ts, te)
        extra: dict[int, str | None] = dict(enumerate(pre_t))
        for k, (pos, t) in enumerate(zip(at.tolist(), slow_t, strict=True)):
            extra[npre + pos + k] = t
        if npre:
            pad = np.zeros(npre, dtype=s.dtype)
            s, e = np.concatenate([pad, s]), np.concatenate([pad, e])
        times = TimeColumn(buf=data, starts=s, ends=e, extra=extra)
    for (name, _), vals in zip(p.wanted, converted, strict=True):
        v = vals
        if len(at):
            v = np.insert(vals, at, np.asarray(rest.values.get(name, []), dtype=np.float64))
        if npre:
            v = np.concatenate([np.asarray(prefix.values.get(name, []), dtype=np.float64), v])
        batch.values[name] = v
        batch.lines[name] = lines
        batch.times[name] = times
    batch.rejected.sort(key=lambda r: r.line)
    return batch
