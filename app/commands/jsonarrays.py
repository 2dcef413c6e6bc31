"""Float arrays as JSON text, fast enough for trains of 100 000 discs.

``solve --json`` writes six objects ``{"id": value, ...}`` per mode (shape, torques,
energy shares, sensitivities), millions of numbers for a long train; formatting them
one by one in Python costs about 0.2 us each.  Here every value of an array is formatted
at once with numpy into a fixed-width field, and the fields are written into a byte
template of the object laid out once per id list (keys written, value slots blank).

A value is written in scientific notation with 12 significant digits,
``-1.23456789012e-05``: a sign slot (a space where the value is not negative), the
twelve digits from integer division into groups of four and a table of the 10 000
groups, and an exponent of fixed width (two digits, three only where an array needs
them, with leading zeros).  JSON allows both the space before a value and the leading
zeros of an exponent (RFC 8259, sections 2 and 6).  The digits are those of Python's
``f"{v:.11e}"``, the correctly rounded decimal: the scaled value ``|v| 10^(11-E)`` is
rounded in floating point, and the few values that the floating-point error could put
on the wrong side of a half (within 1e-3 of it; the error is at most four roundings of
one unit in 2^53, D. Goldberg, "What every computer scientist should know about
floating-point arithmetic", ACM Computing Surveys 23 (1991) 5-48) are formatted by
Python instead.  Zero is written ``0`` (``-0`` for negative zero, as ``%.12g`` writes
them) and a value that is not finite ``null``, right-aligned in the field.

Within each block of rows the keys are padded with spaces after the colon to the
block's longest key, so that the rows have one width and each field goes in as three
strided writes of 64-bit words (numpy structured views of the template).
"""
from __future__ import annotations

from json.encoder import encode_basestring_ascii

import numpy as np

_BLOCK = 4096  # rows whose keys are padded to one width

# 10^k, correctly rounded by Python's float parser, for the scale factors 10^(11-E)
_K0 = 330
_POW10 = np.array([float(f"1e{k}") if k <= 308 else np.inf for k in range(-_K0, _K0 + 1)])
# the scaled value is at most ~1e12 and carries at most ~4 roundings of 1.1e-16 each
# (the table entry, at most two products): 5e-4 would do, 1e-3 leaves room
_HALF_UNSURE = 0.5 - 1e-3


def _exponent_table(digits: int) -> np.ndarray:
    """'e+05' (or 'e+005') as little-endian integers, indexed by exponent + _K0."""
    out = np.zeros(2 * _K0 + 1, np.uint64)
    for e in range(-_K0, _K0 + 1):
        text = f"e{'-' if e < 0 else '+'}{abs(e):0{digits}d}".encode()
        if len(text) == digits + 2:
            out[e + _K0] = int.from_bytes(text, "little")
    return out


_EXPONENT = {2: _exponent_table(2), 3: _exponent_table(3)}
U64 = np.uint64


def _digit_table(fmt: str) -> np.ndarray:
    """fmt % i as ASCII bytes packed little-endian (first character in the lowest byte)
    in uint64, for i below 10^4."""
    return np.array([int.from_bytes((fmt % i).encode(), "little") for i in range(10_000)], U64)


_FOUR_DIGITS = _digit_table("%04d")
# the first four digits as the head of a field: sign slot, d0, '.', d1 d2 d3
_HEAD = _digit_table(" %d") & U64(0xFFFF) | (_digit_table("%04d") >> U64(8)) << U64(24) | U64(0x2E0000)


class _Scratch:
    """Work arrays for n values, reused call after call (no fresh pages per object)."""

    def __init__(self, n: int):
        self.v, self.a, self.x, self.r = (np.empty(n) for _ in range(4))
        self.e, self.i = np.empty(n, np.int64), np.empty(n, np.int64)
        self.m, self.g, self.h = (np.empty(n, np.int64) for _ in range(3))
        self.first, self.middle, self.last, self.t = (np.empty(n, U64) for _ in range(4))


def _scaled(a: np.ndarray, e: np.ndarray, out: np.ndarray, index: np.ndarray) -> np.ndarray:
    """|v| 10^(11 - e) in floating point: one rounding besides the table's, three below
    1e-289 (scaled first by the exact 10^22 twice so that 10^k stays finite)."""
    np.subtract(11 + _K0, e, out=index)
    if index.max() > 300 + _K0:
        deep = index > 300 + _K0
        a = a.copy()
        a[deep] = a[deep] * 1e22 * 1e22
        index[deep] -= 44
    np.take(_POW10, index, out=out)
    return np.multiply(out, a, out=out)


def _decimal_parts(v: np.ndarray, s: _Scratch):
    """Into s.m and s.e, the 12-digit decimal of every finite non-zero value, rounded
    as Python's ``f"{v:.11e}"`` rounds: |v| ~= m 10^(e - 11), 10^11 <= m < 10^12.
    Returns the mask of the values that are zero or not finite (None if there are
    none); their parts are meaningless."""
    a = np.abs(v, out=s.a)
    special = None
    if not (a.min() > 0 and a.max() < np.inf):  # NaN fails both comparisons
        special = ~(a > 0) | (a == np.inf)
        a[special] = 1.0
    x, e = s.x, s.e
    np.log10(a, out=x)
    np.floor(x, out=x)
    np.copyto(e, x, casting="unsafe")
    _scaled(a, e, x, s.i)
    if x.min() < 1e11 or x.max() >= 1e12:  # log10 rounded across a power of ten
        off = np.flatnonzero((x < 1e11) | (x >= 1e12))
        e[off] += np.where(x[off] >= 1e12, 1, -1)
        x[off] = _scaled(a[off], e[off], np.empty(len(off)), np.empty(len(off), np.int64))
    r = np.rint(x, out=s.r)
    if r.max() >= 1e12:  # 9.999999999995 -> 10.0000000000
        carry = r >= 1e12
        r[carry] = 1e11
        e[carry] += 1
    np.copyto(s.m, r, casting="unsafe")
    np.subtract(x, r, out=x)
    np.abs(x, out=x)
    if x.max() > _HALF_UNSURE or r.min() < 1e11 or r.max() >= 1e12:
        unsure = (x > _HALF_UNSURE) | (r < 1e11) | (r >= 1e12)
        if special is not None:
            unsure &= ~special
        for i in np.flatnonzero(unsure).tolist():
            text = f"{a[i]:.11e}"  # d.ddddddddddde[+-]XX, correctly rounded
            s.m[i] = int(text[0] + text[2:13])
            e[i] = int(text[14:])
    return special


def decimal_parts(values):
    """(mantissa, exponent, special) of every value: see _decimal_parts (tests)."""
    v = np.asarray(values, np.float64).ravel()
    s = _Scratch(len(v))
    special = _decimal_parts(v, s)
    return s.m, s.e, (np.zeros(len(v), bool) if special is None else special)


def _words(v: np.ndarray, s: _Scratch):
    """The fixed-width field of every value as three overlapping little-endian 64-bit
    words, to be written in this order at bytes 0, 6 and width - 8 of the field:
    ``±d.ddd`` (its last two bytes overwritten), ``dddddddd`` (d4..d11) and the end of
    those digits with ``e±XX`` (``e±XXX`` where some exponent needs three digits).
    Returns (width, first, middle, last)."""
    n = len(v)
    if n == 0:
        return 18, s.m, s.m, s.m
    special = _decimal_parts(v, s)
    e = s.e
    if special is None:
        wide = e.min() <= -100 or e.max() >= 100
    else:
        normal = e[~special]
        wide = len(normal) > 0 and (normal.min() <= -100 or normal.max() >= 100)
    width = 19 if wide else 18
    # the twelve digits from three groups of four, each looked up in a table
    g, h, first, middle, last, t = s.g, s.h, s.first, s.middle, s.last, s.t
    np.floor_divide(s.m, 100_000_000, out=g)                    # d0..d3
    np.take(_HEAD, g, out=first)
    np.multiply(g, 100_000_000, out=h)
    np.subtract(s.m, h, out=h)                                  # d4..d11
    np.floor_divide(h, 10_000, out=g)                           # d4..d7
    np.take(_FOUR_DIGITS, g, out=middle)
    np.multiply(g, 10_000, out=g)
    np.subtract(h, g, out=h)                                    # d8..d11
    np.take(_FOUR_DIGITS, h, out=t)
    np.left_shift(t, U64(32), out=t)
    np.bitwise_or(middle, t, out=middle)
    if np.signbit(v).any():
        np.add(first, np.signbit(v).astype(U64) * U64(ord("-") - ord(" ")), out=first)
    # last word: the end of d4..d11, 'e', the exponent's sign and digits
    np.take(_EXPONENT[width - 16], np.add(e, _K0, out=s.i), out=last)
    np.left_shift(last, U64(8 * (22 - width)), out=last)
    np.right_shift(middle, U64(8 * (width - 14)), out=t)
    np.bitwise_or(last, t, out=last)
    if special is not None:
        _blank_specials(v, special, width, first, middle, last)
    return width, first, middle, last


def _blank_specials(v, special, width, first, middle, last) -> None:
    """Zero as ``0`` (``-0`` when negative) and NaN or inf as ``null``, right-aligned."""
    zero = special & (v == 0)
    for mask, word in ((special & ~zero, "null"), (zero & ~np.signbit(v), "0"), (zero & np.signbit(v), "-0")):
        if mask.any():
            text = word.rjust(width).encode()
            first[mask] = int.from_bytes(text[0:8], "little")
            middle[mask] = int.from_bytes(text[6:14], "little")
            last[mask] = int.from_bytes(text[width - 8:width], "little")


def _field_dtype(offset: int, width: int, itemsize: int) -> np.dtype:
    return np.dtype({"names": ["first", "middle", "last"], "formats": ["<u8"] * 3,
                     "offsets": [offset, offset + 6, offset + width - 8], "itemsize": itemsize})


def _put(dest: np.ndarray, words, rows: slice) -> None:
    for name, word in zip(("first", "middle", "last"), words):
        dest[name] = word[rows]


def fixed_width(values) -> np.ndarray:
    """Every value as a fixed-width JSON number, one row of ASCII bytes per value:
    `` 1.23456789012e-05``, ``-1.23456789012e-05``, right-aligned ``0``, ``-0`` and
    ``null``; 18 bytes wide, 19 where an exponent needs three digits."""
    v = np.asarray(values, np.float64).ravel()
    width, *words = _words(v, _Scratch(len(v)))
    out = np.empty((len(v), width), np.uint8)
    _put(out.view(_field_dtype(0, width, width))[:, 0], words, slice(None))
    return out


class KeyedFloats:
    """JSON objects ``{"id": value, ...}`` over one list of ids, as bytes: the object
    laid out once per id list and field width, the values written in per call."""

    def __init__(self, ids):
        ids = list(ids)
        try:
            self.keys = list(map(encode_basestring_ascii, ids))  # '"id"', escaped as json.dumps does
        except TypeError:
            self.keys = [encode_basestring_ascii(str(i)) for i in ids]
        self._layouts = {}
        self._scratch = None

    def __len__(self):
        return len(self.keys)

    def _layout(self, width: int):
        """The object's bytes with blank value slots and, per block of rows, where its
        values go: (byte offset, first row, rows, structured dtype of one row).  A row
        is the key, a colon, spaces up to the block's longest key, the value and a
        comma (the closing brace on the last row)."""
        got = self._layouts.get(width)
        if got is None:
            got = self._layouts[width] = _object_layout(self.keys, width)
        return got

    def encode(self, values) -> memoryview:
        """The object with these values (one per id) as ASCII bytes; the view is valid
        until the next call."""
        n = len(self.keys)
        values = np.reshape(values, -1)
        if len(values) != n:
            raise ValueError(f"{len(values)} values for {n} ids")
        if self._scratch is None:
            self._scratch = _Scratch(n)
        v = self._scratch.v
        np.copyto(v, values)  # one pass over a row of a column-major array
        width, *words = _words(v, self._scratch)
        buf, blocks = self._layout(width)
        for at, r0, rows, dtype in blocks:
            _put(buf[at:at + rows * dtype.itemsize].view(dtype), words, slice(r0, r0 + rows))
        return memoryview(buf)


def _object_layout(keys: list[str], width: int):
    """See KeyedFloats._layout; built with numpy, without a Python step per key."""
    n = len(keys)
    if n == 0:
        return np.frombuffer(b"{}", np.uint8).copy(), []
    text = np.frombuffer("".join(keys).encode("ascii"), np.uint8)
    length = np.fromiter(map(len, keys), np.int64, count=n)
    first_rows = np.arange(0, n, _BLOCK)
    key_width = np.maximum.reduceat(length, first_rows) + 1  # with the colon
    row_width = np.repeat(key_width + width + 1, np.diff(np.r_[first_rows, n]))
    row_start = 1 + np.r_[0, np.cumsum(row_width)[:-1]]
    buf = np.full(1 + int(row_width.sum()), ord(" "), np.uint8)
    buf[0] = ord("{")
    key_start = np.cumsum(length) - length
    buf[np.repeat(row_start - key_start, length) + np.arange(len(text))] = text
    buf[row_start + length] = ord(":")
    buf[row_start + row_width - 1] = ord(",")
    buf[-1] = ord("}")
    blocks = [(int(row_start[r0]), int(r0), int(min(_BLOCK, n - r0)), _field_dtype(int(k), width, int(k) + width + 1))
              for r0, k in zip(first_rows, key_width)]
    return buf, blocks
