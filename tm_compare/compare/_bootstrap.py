"""Vectorised stratified cluster bootstrap of weighted means (internals of :mod:`.prevalence`).

A weighted mean of document-topic shares is a ratio of two sums, so every
resample is fully described by how many times each *unit* (a cluster, or a
document when no clusters are given) is drawn. The per-unit sums of weight and
of weighted shares are computed once; a batch of replicates is then a
``(B x U) @ (U x k)`` product of draw counts with those sums. Units never
cross strata (sources): each source keeps its number of units in every
replicate (stratified resampling; Davison & Hinkley 1997, sec. 3.2).

References
----------
Efron & Tibshirani (1993), *An Introduction to the Bootstrap*, ch. 13-14
(percentile and BCa intervals). Field & Welsh (2007), "Bootstrapping clustered
data", JRSS B 69(3) (resampling whole clusters). Hanley & MacGibbon (2006),
"Creating non-parametric bootstrap samples using Poisson frequencies"
(Poisson resampling). Hall & Wilson (1991), "Two guidelines for bootstrap
hypothesis testing", Biometrics 47 (centred test statistic). Benjamini &
Hochberg (1995), JRSS B 57 (false discovery rate).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Callable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from functools import cache

import numpy as np
import scipy.sparse as sp
from scipy.special import ndtr, ndtri
from scipy.stats import false_discovery_control, poisson
from threadpoolctl import ThreadpoolController

# Elements of one (replicates x units) count block: 8 MB of byte counts (about 125 rows at
# 67k units, enough rows for the matrix product to run near its best); while one block is
# drawn, up to _PRODUCT_THREADS are multiplied.
_BLOCK = 1 << 23
_PRODUCT_THREADS = 2
_JACKKNIFE_CHUNK = 4096


@dataclass(frozen=True)
class Units:
    """Per-unit sums, ``sums[u] = (sum_d w_d theta_d, sum_d w_d)`` over the documents of unit u.

    The weighted shares and the weight share one (U, k + 1) array, so a batch of replicates
    multiplies its counts with both in one product.
    """

    stratum: np.ndarray  # (U,) stratum code of each unit, units sorted by stratum
    sums: np.ndarray  # (U, k + 1): num (U, k), then den
    n_strata: int

    @property
    def num(self) -> np.ndarray:
        return self.sums[:, :-1]

    @property
    def den(self) -> np.ndarray:
        return self.sums[:, -1]

    def bounds(self) -> list[tuple[int, int]]:
        """Start and stop index of each stratum's units."""
        edges = np.searchsorted(self.stratum, np.arange(self.n_strata + 1))
        return list(zip(edges[:-1].tolist(), edges[1:].tolist(), strict=True))

    def totals(self) -> tuple[np.ndarray, np.ndarray]:
        """Full-sample sums per stratum: num (S, k), den (S,)."""
        both = np.stack([self.sums[a:b].sum(axis=0) for a, b in self.bounds()])
        return both[:, :-1], both[:, -1]


def unit_codes(strata: np.ndarray, clusters: np.ndarray | None) -> np.ndarray:
    """Code each document's unit: a (stratum, cluster) pair; a missing cluster is its own unit.

    Parameters
    ----------
    strata : int array (D,), stratum code of each document.
    clusters : int array (D,) with -1 for "no cluster", or None for document-level units.
    """
    n = len(strata)
    if clusters is None:
        return np.arange(n)
    # Documents without a cluster get codes past every real cluster so they stay alone.
    own = np.where(clusters < 0, clusters.max(initial=-1) + 1 + np.arange(n), clusters)
    return np.unique(strata * (int(own.max()) + 1) + own, return_inverse=True)[1].ravel()


def unit_sums(shares, weights, strata, units, n_strata) -> Units:
    """Sum weights and weighted shares per unit, dropping zero-weight units (they never count)."""
    n_units = int(units.max()) + 1
    k = shares.shape[1]
    if n_units == len(units):  # every document is its own unit: no sums to take
        from ._kernels import weighted_rows  # numba: imported at the first bootstrap

        if n_strata < 2**15 and np.array_equal(units, np.arange(len(units))):
            # Units in document order: a stable sort by stratum (radix, on 16-bit codes)
            # gives the order the lexsort below gives, several times faster.
            keep = np.argsort(strata.astype(np.int16), kind="stable")
        else:
            keep = np.lexsort((units, strata))
        keep = keep[weights[keep] > 0]
        return Units(strata[keep], weighted_rows(shares, weights, keep), n_strata)
    # A sparse (units x documents) matrix of weights sums rows far faster than np.add.at.
    members = sp.csr_matrix((weights, (units, np.arange(len(units)))), shape=(n_units, len(units)))
    sums = np.empty((n_units, k + 1))
    sums[:, :k] = members @ shares
    sums[:, k] = np.bincount(units, weights=weights, minlength=n_units)
    stratum = np.zeros(n_units, dtype=np.int64)
    stratum[units] = strata
    order = np.lexsort((np.arange(n_units), stratum))
    keep = order[sums[order, k] > 0]
    return Units(stratum[keep], sums[keep], n_strata)


# Poisson(1) frequencies by table look-up of 16-bit uniforms: a 65,536-entry inverse CDF,
# so each probability is exact to 1/65,536 (Hanley & MacGibbon 2006 use Poisson(1) counts).
_POISSON_TABLE = np.searchsorted(
    np.round(poisson.cdf(np.arange(16), 1.0) * 65536), np.arange(65536), side="right"
).astype(np.uint8)


def draw_counts(n: int, size: int, rng: np.random.Generator, method: str):
    """Draw counts (size x n, a :class:`._kernels.Counts`): how often each of n units enters
    each replicate.

    ``"multinomial"`` draws n units with replacement (the classical bootstrap), the very
    integers ``rng.integers(0, n, (size, n))`` gives, as ``scipy.stats.bootstrap`` draws its
    indices (see :mod:`._kernels`); ``"poisson"`` draws independent Poisson(1) counts.
    """
    from ._kernels import multinomial_counts, table_counts  # numba: at the first bootstrap

    if method == "poisson":
        return table_counts(rng.integers(0, 65536, (size, n), dtype=np.uint16), _POISSON_TABLE)
    return multinomial_counts(rng, n, size)


def replicate(
    units: Units,
    n_boot: int,
    rng: np.random.Generator,
    method: str = "multinomial",
    redraw: Callable[[np.random.Generator], Units] | None = None,
    n_redraws: int = 1,
) -> tuple[np.ndarray, np.ndarray]:
    """Replicate per-stratum sums: num (B, S, k) and den (B, S).

    With ``redraw`` (model uncertainty), replicates run in ``n_redraws`` batches and each
    batch uses the unit sums of one fresh call ``redraw(rng)``.

    Blocks of replicates are drawn in order from ``rng`` by the calling thread (so the
    draws are those of one call per stratum and batch) as byte counts; meanwhile
    :data:`_PRODUCT_THREADS` threads widen the blocks already drawn and multiply them with
    the unit sums (the compiled drawing and the matrix product release the GIL). At 200k
    documents the products take about twice the drawing's CPU time, so the drawing thread
    and two product threads keep two cores busy.
    """
    k = units.sums.shape[1] - 1
    num = np.empty((n_boot, units.n_strata, k))
    den = np.empty((n_boot, units.n_strata))

    def product(counts, rows, s, sums):
        both = counts.times(sums)  # topic sums and weight together: the counts are read once
        num[rows, s], den[rows, s] = both[:, :k], both[:, k]

    batches = np.array_split(np.arange(n_boot), n_redraws if redraw else 1)
    # One BLAS thread per product: the blocks already run side by side, and a
    # multi-threaded product of these thin blocks spends more CPU than it saves.
    with (
        _threadpools().limit(limits=1, user_api="blas"),
        ThreadPoolExecutor(max_workers=_PRODUCT_THREADS) as pool,
    ):
        pending: deque[Future] = deque()
        for batch in batches:
            current = redraw(rng) if redraw else units
            for s, (a, b) in enumerate(current.bounds()):
                n = b - a
                step = max(1, _BLOCK // max(n, 1))
                for start in range(0, len(batch), step):
                    rows = batch[start : start + step]
                    counts = draw_counts(n, len(rows), rng, method)
                    while len(pending) >= _PRODUCT_THREADS:  # bounded memory
                        pending.popleft().result()
                    pending.append(pool.submit(product, counts, rows, s, current.sums[a:b]))
        for job in pending:
            job.result()
    return num, den


@cache
def _threadpools() -> ThreadpoolController:
    """The loaded thread pools, found once (each search walks every loaded library)."""
    return ThreadpoolController()


Statistic = Callable[[np.ndarray, np.ndarray], np.ndarray]


def jackknife_acceleration(units: Units, statistic: Statistic) -> np.ndarray:
    """BCa acceleration from leave-one-unit-out values, summed over strata.

    Follows ``scipy.stats.bootstrap`` for several samples, which cites Efron & Tibshirani
    (1993, sec. 14.3 and eq. 15.36): ``a = sum U^3 / n^3 / (6 (sum U^2 / n^2)^1.5)`` with
    ``U_i = (n - 1)(mean_jack - theta_(i))`` within each stratum (sums over all strata).
    One statistic per unit: the reference the closed forms (:func:`stratum_acceleration`,
    :func:`pooled_acceleration`) are tested against.
    """
    full_num, full_den = units.totals()
    nums = dens = 0.0
    for s, (a, b) in enumerate(units.bounds()):
        n = b - a
        values = np.concatenate(list(_leave_one_out(units, statistic, full_num, full_den, s, a, b)))
        u = (n - 1) * (values.mean(axis=0) - values)
        squared = u * u
        nums = nums + (squared * u).sum(axis=0) / n**3
        dens = dens + squared.sum(axis=0) / n**2
    with np.errstate(invalid="ignore", divide="ignore"):
        return nums / (6 * dens**1.5)


def stratum_acceleration(units: Units) -> np.ndarray:
    """BCa acceleration of each stratum's weighted means (S * k,), in closed form.

    The value :func:`jackknife_acceleration` gives for ``num / den`` per stratum: leaving
    out unit i moves only its own stratum's means, to ``(T_s - num_i) / (W_s - den_i)``, so
    each column's sums run over its stratum's units (the other strata add zeros), at the
    cost of one pass over the unit sums instead of one statistic per unit.
    """
    k = units.sums.shape[1] - 1
    accel = np.empty((units.n_strata, k))
    for s, (a, b) in enumerate(units.bounds()):
        n = b - a
        total = units.sums[a:b].sum(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            theta = total[:k] - units.num[a:b]
            theta /= (total[k] - units.den[a:b])[:, None]
            # theta_(i) - mean = -U_i / (n - 1): fold the factor into the sums
            theta -= theta.mean(axis=0)
            squared = theta * theta  # products, not powers: numpy's power is far slower
            squares = squared.sum(axis=0) * ((n - 1) / n) ** 2
            cubes = -np.einsum("ij,ij->j", squared, theta) * ((n - 1) / n) ** 3
            accel[s] = cubes / (6 * squares**1.5)
    return accel.ravel()


def pooled_acceleration(
    units: Units,
    pairs: list[tuple[list[int], list[int]]],
    combine: Callable[[np.ndarray, np.ndarray], np.ndarray],
) -> np.ndarray:
    """BCa acceleration of ``combine(P_a, P_b)`` for each pair and topic (pairs * k,),
    where ``P_x`` is the weighted mean of the strata ``x`` pooled: ``sum num / sum den``
    (of ``P_a`` alone when the pair's second side is empty).

    The value :func:`jackknife_acceleration` gives for that statistic, in closed form:
    leaving out a unit of stratum s moves only the side holding s (the sides of a pair
    share no stratum), to ``(T - num_i) / (W - den_i)`` over that side's pooled sums; a
    stratum on neither side leaves the statistic unchanged and adds nothing. So each pair
    costs one pass over the units of its strata instead of one statistic per unit.
    ``combine`` is a ufunc (``np.subtract``, ``np.divide``).
    """
    num, den = units.totals()
    bounds = units.bounds()
    k = num.shape[1]
    cubes = np.zeros((len(pairs), k))
    squares = np.zeros((len(pairs), k))
    with np.errstate(invalid="ignore", divide="ignore"):
        for p, (a_side, b_side) in enumerate(pairs):
            sides = (a_side, b_side) if len(b_side) else (a_side,)
            pooled = [num[side].sum(axis=0) / den[side].sum() for side in sides]
            for moved, side in enumerate(sides):
                total, weight = num[side].sum(axis=0), den[side].sum()
                for s in side:
                    start, stop = bounds[s]
                    n = stop - start
                    theta = total - units.num[start:stop]
                    theta /= (weight - units.den[start:stop])[:, None]
                    if len(sides) == 2:  # the other side's pooled mean stays put
                        if moved == 0:
                            combine(theta, pooled[1], out=theta)
                        else:
                            combine(pooled[0], theta, out=theta)
                    # theta_(i) - mean = -U_i / (n - 1): fold the factor into the sums
                    theta -= theta.mean(axis=0)
                    squared = theta * theta
                    cubes[p] -= np.einsum("ij,ij->j", squared, theta) * ((n - 1) / n) ** 3
                    squares[p] += squared.sum(axis=0) * ((n - 1) / n) ** 2
        return (cubes / (6 * squares**1.5)).ravel()


def _leave_one_out(units, statistic, full_num, full_den, s, a, b) -> Iterator[np.ndarray]:
    for start in range(a, b, _JACKKNIFE_CHUNK):
        stop = min(b, start + _JACKKNIFE_CHUNK)
        num = np.repeat(full_num[None], stop - start, axis=0)
        den = np.repeat(full_den[None], stop - start, axis=0)
        num[:, s] -= units.num[start:stop]
        den[:, s] -= units.den[start:stop]
        yield statistic(num, den)


def interval(
    theta_hat: np.ndarray,
    theta_b: np.ndarray,
    level: float,
    method: str = "percentile",
    acceleration: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Percentile or BCa interval per column of ``theta_b`` (B, m).

    The BCa bias correction uses the mid-rank proportion ``(#{θ* < θ} + #{θ* <= θ}) / 2B``
    as ``scipy.stats.bootstrap`` does; quantiles interpolate linearly (Hyndman & Fan type 7).
    Columns whose correction is undefined (all replicates on one side) come back NaN.
    """
    alpha = (1 - level) / 2
    m = theta_b.shape[1]
    if method == "bca":
        below = (theta_b < theta_hat).sum(axis=0) + (theta_b <= theta_hat).sum(axis=0)
        z0 = ndtri(below / (2 * theta_b.shape[0]))
        accel = np.zeros(m) if acceleration is None else acceleration
        levels = []
        for z in (ndtri(alpha), -ndtri(alpha)):
            with np.errstate(invalid="ignore", divide="ignore"):
                levels.append(ndtr(z0 + (z0 + z) / (1 - accel * (z0 + z))))
        lo_q, hi_q = levels
    else:
        lo_q, hi_q = np.full(m, alpha), np.full(m, 1 - alpha)
    ordered = np.sort(theta_b, axis=0)
    return _quantile_sorted(ordered, lo_q), _quantile_sorted(ordered, hi_q)


def _quantile_sorted(ordered: np.ndarray, q: np.ndarray) -> np.ndarray:
    n, m = ordered.shape
    out = np.full(m, np.nan)
    ok = np.isfinite(q)
    pos = q[ok] * (n - 1)
    lo = np.floor(pos).astype(int)
    hi = np.minimum(lo + 1, n - 1)
    cols = np.flatnonzero(ok)
    frac = pos - lo
    out[ok] = ordered[lo, cols] + frac * (ordered[hi, cols] - ordered[lo, cols])
    return out


def centred_p_value(theta_hat: np.ndarray, theta_b: np.ndarray, null: float = 0.0) -> np.ndarray:
    """Two-sided bootstrap p-value of ``theta = null`` from the centred replicates.

    ``p = (1 + #{|θ* - θ̂| >= |θ̂ - null|}) / (B + 1)``: the replicates, shifted to the null
    (Hall & Wilson 1991, guideline 1), with the +1 of Davison & Hinkley (1997, eq. 4.11)
    so that p is never 0.
    """
    extreme = np.abs(theta_b - theta_hat) >= np.abs(theta_hat - null)
    return (1 + extreme.sum(axis=0)) / (theta_b.shape[0] + 1)


def benjamini_hochberg(p: np.ndarray) -> np.ndarray:
    """Benjamini-Hochberg (1995) adjusted p-values (step-up, monotone, capped at 1).

    Computed by :func:`scipy.stats.false_discovery_control`, which scales the j-th smallest
    of m p-values by ``m / j``: a p-value lying exactly on its boundary ``j q / m`` adjusts to
    q and is rejected by ``p_adjusted <= q``, as with statsmodels'
    ``multipletests(method="fdr_bh")``.
    """
    return false_discovery_control(np.asarray(p, dtype=float), method="bh")
