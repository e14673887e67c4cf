"""Compiled inner loops of the bootstrap (:mod:`._bootstrap`).

Multinomial counts: the integers numpy draws, counted as they are drawn.
``scipy.stats.bootstrap`` draws its resamples as ``rng.integers(0, n, (B, n))``. For
numpy's default bit generator (PCG64) :func:`multinomial_counts` draws the very same
integers in compiled code and adds each one to its replicate's count at once, so no
(B x n) index matrix is written and read back; the generator is left in the state numpy
would leave it in. The steps are numpy's: the 128-bit linear congruential step and XSL-RR
output of PCG64 (O'Neill 2014, "PCG: A family of simple fast space-efficient statistically
good algorithms for random number generation"), each 64-bit output used as two 32-bit
values (low half first), and Lemire's bounded rejection (Lemire 2019, "Fast random integer
generation in an interval", ACM TOMACS 29(1)). Other bit generators draw through numpy
and are counted here.

Counts are bytes (:class:`Counts`): a row of n units is counted in n bytes, which stay in
the core's caches (n float64 would not at 67k units), and a block of byte counts is an
eighth of the memory traffic between the drawing thread and the threads multiplying it
with the unit sums, which widen it to float64 a cache-sized piece at a time. A count
above 255 needs more than 255 of a row's n draws to hit one unit (never seen); the row's
total shows the wrap, and that row is drawn again in float64 from the state it started
at, so every count stays exact.

Poisson counts: 16-bit uniforms looked up in an inverse-CDF table (bytes as well).

Weighted rows: a document-level unit's sums (its weighted shares and its weight) in one
pass over the shares, in stratum order.

numba is imported when this module is, so import it where a bootstrap runs.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from llvmlite import ir
from numba import njit, types
from numba.extending import intrinsic

# PCG64's 128-bit multiplier (numpy's PCG_DEFAULT_MULTIPLIER_128), high and low halves.
_MULT_HI = np.uint64(0x2360ED051FC65DA4)
_MULT_LO = np.uint64(0x4385DF649FCCF645)
_LOW32 = np.uint64(0xFFFFFFFF)
_MASK64 = (1 << 64) - 1


@intrinsic
def _mulhi(typingctx, a, b):
    """High 64 bits of the 128-bit product of two uint64 (one machine multiply)."""

    def codegen(context, builder, signature, args):
        wide = ir.IntType(128)
        product = builder.mul(builder.zext(args[0], wide), builder.zext(args[1], wide))
        return builder.trunc(builder.lshr(product, ir.Constant(wide, 64)), ir.IntType(64))

    return types.uint64(types.uint64, types.uint64), codegen


@njit(inline="always")
def _pcg64_step(hi, lo, inc_hi, inc_lo):  # pragma: no cover - compiled
    """One PCG64 step: the new state (hi, lo) and its 64-bit XSL-RR output."""
    low = lo * _MULT_LO
    high = _mulhi(lo, _MULT_LO) + hi * _MULT_LO + lo * _MULT_HI
    lo = low + inc_lo
    hi = high + inc_hi + np.uint64(lo < low)
    value = hi ^ lo
    rot = hi >> np.uint64(58)
    return hi, lo, (value >> rot) | (value << ((np.uint64(64) - rot) & np.uint64(63)))


@njit(inline="always")
def _pcg64_row(row, n, threshold, hi, lo, inc_hi, inc_lo, has, kept):  # pragma: no cover
    """Add ``n`` bounded draws to ``row`` (counts modulo its dtype's range).

    Each 64-bit output gives two 32-bit values, low half first; a high half left over at the
    end of the row is kept (``has``, ``kept``) for the next, as numpy's ``next_uint32`` does.
    """
    bound = np.uint64(n)
    left = n
    if has:
        has = np.uint64(0)
        m = kept * bound
        if (m & _LOW32) >= threshold:
            row[m >> np.uint64(32)] += 1
            left -= 1
    while left > 0:
        hi, lo, value = _pcg64_step(hi, lo, inc_hi, inc_lo)
        kept = value >> np.uint64(32)
        m = (value & _LOW32) * bound
        if (m & _LOW32) >= threshold:
            row[m >> np.uint64(32)] += 1
            left -= 1
            if left == 0:
                has = np.uint64(1)
                break
        m = kept * bound
        if (m & _LOW32) >= threshold:
            row[m >> np.uint64(32)] += 1
            left -= 1
    return hi, lo, has, kept


@njit(nogil=True, cache=True)
def _pcg64_counts(state, n, out, spill, wide, cap):  # pragma: no cover - compiled
    """Fill ``out`` (rows x n, uint8) with counts of ``rows * n`` bounded draws from ``state``.

    ``state`` = [state high, state low, increment high, increment low, has_uint32,
    uinteger] as in ``PCG64.state``; it is updated in place.

    A row of n bytes stays in the core's caches where n float64 would not. A count past
    255 wraps, which the row's total shows (it falls short of n by 256 per wrap); such a
    row, or one with a count of ``cap`` or more, is drawn again from the state it started
    at into ``spill[r]`` (float64), and ``wide[r]`` is set.
    """
    hi, lo, inc_hi, inc_lo, has, kept = state[0], state[1], state[2], state[3], state[4], state[5]
    # numpy's Lemire threshold (UINT32_MAX - rng) % rng_excl, with rng_excl = n
    threshold = (np.uint64(1 << 32) - np.uint64(n)) % np.uint64(n)
    for r in range(out.shape[0]):
        start_hi, start_lo, start_has, start_kept = hi, lo, has, kept
        row = out[r]
        row[:] = 0
        hi, lo, has, kept = _pcg64_row(row, n, threshold, hi, lo, inc_hi, inc_lo, has, kept)
        total = 0
        top = 0
        for j in range(n):
            total += row[j]
            top = max(top, row[j])
        wide[r] = total != n or top >= cap
        if wide[r]:  # a count wrapped (or reached the cap): redraw the row in float64
            spill[r] = 0.0
            hi, lo, has, kept = _pcg64_row(
                spill[r], n, threshold, start_hi, start_lo, inc_hi, inc_lo, start_has, start_kept
            )
    state[0], state[1], state[4], state[5] = hi, lo, has, kept


@njit(nogil=True, cache=True)
def _count_rows(indices, n, out):  # pragma: no cover - compiled
    for r in range(indices.shape[0]):
        row = out[r]
        row[:] = 0.0
        for i in indices[r]:
            row[i] += 1.0


@njit(nogil=True, cache=True)
def _weighted_rows(shares, weights, order, out):  # pragma: no cover - compiled
    k = shares.shape[1]
    for j in range(order.size):
        row, weight = order[j], weights[order[j]]
        for t in range(k):
            out[j, t] = shares[row, t] * weight
        out[j, k] = weight


def weighted_rows(shares: np.ndarray, weights: np.ndarray, order: np.ndarray) -> np.ndarray:
    """``(shares[order] * weights[order, None], weights[order])`` as one (len(order), k + 1)
    array, without a temporary copy of the gathered shares."""
    out = np.empty((len(order), shares.shape[1] + 1))
    _weighted_rows(shares, weights, order, out)
    return out


@njit(nogil=True, cache=True)
def _look_up(drawn, table, out):  # pragma: no cover - compiled
    for r in range(drawn.shape[0]):
        for i in range(drawn.shape[1]):
            out[r, i] = table[drawn[r, i]]


# Columns of uint8 counts widened to float64 at a time before their product: the widened
# piece (rows x _CHUNK) stays in the core's caches.
_CHUNK = 2048


@dataclass(frozen=True)
class Counts:
    """Counts of a block of replicates (rows x n): how often each unit enters each one.

    ``values`` is uint8 (or float64 when numpy drew the integers); ``wide`` holds, in
    float64, the rows whose counts did not fit a byte (never seen; see :func:`_pcg64_counts`).
    A block of bytes is an eighth of the memory traffic of float64 between the thread that
    draws it and the one that multiplies it.
    """

    values: np.ndarray
    wide: dict[int, np.ndarray] = field(default_factory=dict)

    def dense(self) -> np.ndarray:
        """The counts as one float64 array."""
        out = self.values.astype(np.float64)
        for r, row in self.wide.items():
            out[r] = row
        return out

    def times(self, sums: np.ndarray) -> np.ndarray:
        """``counts @ sums`` (rows x m) for ``sums`` (n x m), widening :data:`_CHUNK`
        columns of the counts at a time."""
        rows, n = self.values.shape
        if self.values.dtype != np.uint8:
            out = self.values @ sums
        else:
            out = np.zeros((rows, sums.shape[1]))
            piece = np.empty((rows, min(n, _CHUNK)))
            for a in range(0, n, _CHUNK):
                b = min(n, a + _CHUNK)
                if b - a < piece.shape[1]:
                    piece = np.empty((rows, b - a))
                np.copyto(piece, self.values[:, a:b])
                out += piece @ sums[a:b]
        for r, row in self.wide.items():
            out[r] = row @ sums
        return out


def table_counts(drawn: np.ndarray, table: np.ndarray) -> Counts:
    """``table[drawn]`` as uint8 counts (Poisson counts from 16-bit uniforms), several times
    faster than numpy's fancy indexing of so many elements."""
    out = np.empty(drawn.shape, dtype=np.uint8)
    _look_up(drawn, table, out)
    return Counts(out)


def multinomial_counts(rng: np.random.Generator, n: int, size: int, cap: int = 255) -> Counts:
    """Counts (size x n) of ``rng.integers(0, n, (size, n))``, drawn from ``rng``.

    ``cap`` (1-255): a PCG64 row with a count this high is redrawn in float64; below 255
    it only serves tests, which force that path.
    """
    if n == 1:  # numpy draws nothing for a one-value range
        return Counts(np.ones((size, 1), dtype=np.uint8))
    generator = rng.bit_generator
    if type(generator) is not np.random.PCG64 or n >= 2**32:
        # 32-bit indices are the same numbers as 64-bit ones below 2**32 (numpy draws both
        # with its 32-bit bounded generator), drawn about 1.5x faster.
        dtype = np.int32 if n < 2**31 else np.int64
        out = np.empty((size, n))
        _count_rows(rng.integers(0, n, (size, n), dtype=dtype), n, out)
        return Counts(out)
    out = np.empty((size, n), dtype=np.uint8)
    spill = np.empty((size, n))  # pages are only touched by rows redrawn wide
    wide = np.zeros(size, dtype=np.bool_)
    with generator.lock:
        full = generator.state
        pcg, inc = full["state"]["state"], full["state"]["inc"]
        words = [pcg >> 64, pcg & _MASK64, inc >> 64, inc & _MASK64]
        state = np.array([*words, full["has_uint32"], full["uinteger"]], dtype=np.uint64)
        _pcg64_counts(state, n, out, spill, wide, cap)
        full["state"]["state"] = (int(state[0]) << 64) | int(state[1])
        full["has_uint32"], full["uinteger"] = int(state[4]), int(state[5])
        generator.state = full
    return Counts(out, {int(r): spill[r].copy() for r in np.flatnonzero(wide)})
