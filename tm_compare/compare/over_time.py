"""Topic prevalence over time, per source, and differences between sources in each period.

Each document falls in one period of its date (a day, week, month, quarter or year: pandas
period aliases ``"D"``, ``"W"``, ``"M"``, ``"Q"``, ``"Y"``). The prevalence of topic k in
source s and period t is the weighted mean of the shares ``theta_dk`` over the documents of s
dated in t, with the same weighting and bootstrap as :func:`.prevalence.prevalence`.

**Default period.** ``freq=None`` takes the finest of day, week, month, quarter and year that
splits the span of the dates into at most :data:`MAX_PERIODS` periods (March to June: weeks).

**Bootstrap.** Every (source, period) cell is a stratum of its own: the bootstrap resamples
the cell's clusters (or documents) and keeps their number, so each period's band is that of
the period's own sample. A cluster seen in several periods (a reader active all spring) is
resampled separately in each, as it is across sources (see :mod:`.prevalence`): bands of one
period are exact for that period, and a difference between periods would treat them as
independent samples (conservative when readers' habits persist).

**Thin periods.** A cell with fewer than ``min_period_docs`` documents is marked
(``few_documents``): its
estimate is reported, but charts draw it hollow, off the line, and differences skip it. A cell
with a single resampling unit has no band (the bootstrap cannot measure it); an empty cell has no
estimate. A UserWarning counts those cells.

**Differences.** In each period where neither side has too few documents, the difference between sources
(``against="each"``: every pair; ``"rest"``: each source against the others pooled) with its
bootstrap interval and the centred two-sided p-value (Hall & Wilson 1991), adjusted by
Benjamini & Hochberg (1995) across all topics x periods of a comparison.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from .._validation import param_error
from ..errors import ComparisonError
from ..options import check, default
from . import _bootstrap as bs
from .prevalence import (
    _POISSON_MIN_UNITS,
    Bootstrap,
    _bootstrap_keywords,
    _design,
    _prevalence_stat,
    _replicates,
)

#: Period aliases tried, finest first, when ``freq=None``.
PERIODS = ("D", "W", "M", "Q", "Y")
#: ``freq=None`` picks the finest period giving at most this many periods over the date span.
MAX_PERIODS = 26
_UNREADABLE = "unreadable date (kept, date missing)"  # the intake report's reason


def choose_freq(dates) -> str:
    """The default period for ``dates``: the finest of :data:`PERIODS` that splits their span
    into at most :data:`MAX_PERIODS` periods."""
    dates = pd.DatetimeIndex(pd.Series(dates).dropna())
    if dates.empty:
        return PERIODS[0]
    for freq in PERIODS:
        first, last = dates.min().to_period(freq), dates.max().to_period(freq)
        if (last - first).n + 1 <= MAX_PERIODS:
            return freq
    return PERIODS[-1]


def document_dates(prepared, owner: str) -> pd.Series:
    """The documents' dates (naive UTC), with a clear error when the corpus has none."""
    meta = prepared.meta
    unread = prepared.report.to_frame()
    unread = unread[unread["reason"] == _UNREADABLE]
    if "date" not in meta.columns or meta["date"].isna().all():
        why = (
            f" Intake could not read {int(unread['count'].sum())} date value(s) (first: "
            f"{unread['example'].iloc[0]!r}); read the corpus again with the dates' format: "
            "Corpus.read(..., date_format='%d/%m/%Y'), or tm-compare prepare ... "
            "--date-format '%d/%m/%Y'."
            if len(unread)
            else " Name the date column when reading the corpus (date='COLUMN', or --date COLUMN)."
        )
        msg = f"{owner} needs document dates, but no document of the prepared corpus has one.{why}"
        raise ComparisonError(msg)
    values = meta["date"].reset_index(drop=True)
    if pd.api.types.is_datetime64_any_dtype(values.dtype):
        if len(unread) and values.isna().any():
            warnings.warn(
                f"Intake could not read {int(unread['count'].sum())} date value(s) (first: "
                f"{unread['example'].iloc[0]!r}); those documents have no date. If the dates "
                "follow one format, read the corpus with date_format= (--date-format).",
                UserWarning,
                stacklevel=3,
            )
        if getattr(values.dt, "tz", None) is not None:
            values = values.dt.tz_convert("UTC").dt.tz_localize(None)
        return values
    parsed = pd.to_datetime(values, errors="coerce", utc=True, format="ISO8601")
    bad = parsed.isna() & values.notna()
    if bad.any():
        msg = (
            f"The 'date' column of the prepared corpus holds values that are not dates "
            f"({int(bad.sum())} of {len(values)}; first: {values[bad].iloc[0]!r}), so {owner} "
            "cannot place documents in periods. Read the corpus with date='COLUMN' (and "
            "date_format=...) so intake parses them."
        )
        raise ComparisonError(msg)
    return parsed.dt.tz_localize(None)


def _period_codes(dates: pd.Series, freq, owner: str):
    """Each date's period (-1 when missing), the full range of periods, and the alias used."""
    if freq is None:
        freq = choose_freq(dates)
    if not isinstance(freq, str):
        raise param_error(owner, "freq", freq, _FREQ_ACCEPTED)
    known = dates.notna().to_numpy()
    try:
        stamps = pd.DatetimeIndex(dates[known]).to_period(freq)
    except (ValueError, TypeError):
        raise param_error(owner, "freq", freq, _FREQ_ACCEPTED) from None
    index = pd.period_range(stamps.min(), stamps.max(), freq=stamps.freq)
    codes = np.full(len(dates), -1, dtype=np.int64)
    codes[known] = index.get_indexer(stamps)
    return codes, index, freq


_FREQ_ACCEPTED = (
    "None (chosen from the date span) or a pandas period alias: 'D' (day), 'W' (week), "
    "'M' (month), 'Q' (quarter), 'Y' (year)"
)


@dataclass(frozen=True)
class _Cells:
    """Per (source, period) cell: the point estimates, counts and the bootstrap of those
    measurable (two resampling units or more)."""

    sources: list[str]
    index: pd.PeriodIndex
    freq: str
    estimate: np.ndarray  # (S * P, k), NaN where the cell has no weight
    n_documents: np.ndarray  # (S * P,)
    n_units: np.ndarray
    total_weight: np.ndarray
    sparse: np.ndarray  # bool (S * P,)
    measured: np.ndarray  # indices of the cells bootstrapped, in bootstrap stratum order
    units: bs.Units  # of the measured cells
    reps: tuple[np.ndarray, np.ndarray]
    boot: Bootstrap
    columns: dict  # weighting, cluster


def _cells(owner, fit, prepared, freq, weighting, cluster, sources, min_period_docs, settings):
    if not (isinstance(min_period_docs, int | np.integer) and min_period_docs >= 1):
        raise param_error(owner, "min_period_docs", min_period_docs, "an integer >= 1")
    boot = Bootstrap.of(owner, settings)
    dates = document_dates(prepared, owner)
    design = _design(fit, prepared, owner, weighting, cluster, sources, boot.cap_group_share)
    kept = np.isin(np.asarray(prepared.sources).astype(str), design.sources)  # as _design keeps
    codes, index, freq = _period_codes(dates[kept].reset_index(drop=True), freq, owner)
    dated = codes >= 0
    if not dated.all():
        missing = pd.Series(np.asarray(design.sources)[design.strata[~dated]]).value_counts()
        listed = ", ".join(f"{n} of {s!r}" for s, n in missing.sort_index().items())
        warnings.warn(
            f"{int((~dated).sum())} document(s) have no date and are left out of {owner} "
            f"({listed}).",
            UserWarning,
            stacklevel=3,
        )
    n_src, n_per = len(design.sources), len(index)
    cell = design.strata[dated] * n_per + codes[dated]
    clusters = None if design.clusters is None else design.clusters[dated]
    pick = np.flatnonzero(dated)
    timed = replace(
        design,
        shares=design.shares[pick],
        weights=design.weights[pick],
        strata=cell,
        sources=[f"cell {c}" for c in range(n_src * n_per)],
        clusters=clusters,
        unit_of=bs.unit_codes(cell, clusters),
        dirichlet=None if design.dirichlet is None else design.dirichlet[pick],
    )
    every = timed.units()  # zero-weight units dropped: they never count
    num, den = every.totals()
    n_cells = n_src * n_per
    n_units = np.bincount(every.stratum, minlength=n_cells)
    n_documents = np.bincount(cell, minlength=n_cells)
    with np.errstate(invalid="ignore", divide="ignore"):
        estimate = np.where(den[:, None] > 0, num / den[:, None], np.nan)
    measured = np.flatnonzero(n_units >= 2)
    if boot.resampling == "poisson" and (n_units[measured] < _POISSON_MIN_UNITS).any():
        fewest = int(n_units[measured].min())
        msg = (
            f"resampling='poisson' needs at least {_POISSON_MIN_UNITS} resampling units in every "
            f"source and period; one has {fewest} ({owner}). Use resampling='multinomial', or a "
            "longer period (freq='M')."
        )
        raise ComparisonError(msg)
    position = np.full(n_cells, -1)
    position[measured] = np.arange(len(measured))
    inside = position[cell] >= 0
    sub = np.flatnonzero(inside)
    boot_design = replace(
        timed,
        shares=timed.shares[sub],
        weights=timed.weights[sub],
        strata=position[cell[sub]],
        sources=[timed.sources[c] for c in measured],
        clusters=None if clusters is None else clusters[sub],
        unit_of=bs.unit_codes(position[cell[sub]], None if clusters is None else clusters[sub]),
        dirichlet=None if timed.dirichlet is None else timed.dirichlet[sub],
    )
    if len(measured) == 0:
        msg = (
            f"No source has two resampling units (documents or clusters) in any period, so "
            f"{owner} cannot measure uncertainty. Use a longer period (freq='M' or 'Q') or "
            "cluster=None."
        )
        raise ComparisonError(msg)
    units, reps = _replicates(boot_design, boot, owner)
    sparse = n_documents < min_period_docs
    thin = int((sparse & (n_documents > 0)).sum())
    if thin:
        warnings.warn(
            f"{thin} source-period cell(s) have fewer than {min_period_docs} documents "
            f"(freq={freq!r}); {owner} marks them (column 'few_documents'): no line or "
            "difference is drawn through them. Use a longer period or lower min_period_docs.",
            UserWarning,
            stacklevel=3,
        )
    return _Cells(
        sources=design.sources,
        index=index,
        freq=freq,
        estimate=estimate,
        n_documents=n_documents,
        n_units=n_units,
        total_weight=den,
        sparse=sparse,
        measured=measured,
        units=units,
        reps=reps,
        boot=boot,
        columns=design.columns(),
    )


def _period_columns(index: pd.PeriodIndex, codes: np.ndarray) -> dict:
    return {
        "period": index.astype(str)[codes],
        "period_start": index.start_time[codes],
        "period_end": index.end_time.normalize()[codes],
    }


def _acceleration(units: bs.Units, pick_a: np.ndarray, pick_b: np.ndarray | None = None):
    """BCa acceleration of ``pooled(a)`` (minus ``pooled(b)``) for each row of the picks: the
    closed form of :func:`._bootstrap.pooled_acceleration`, a row's picked cells as one side."""
    pairs = [
        (np.flatnonzero(pick_a[r]), [] if pick_b is None else np.flatnonzero(pick_b[r]))
        for r in range(pick_a.shape[0])
    ]
    return bs.pooled_acceleration(units, pairs, np.subtract)


def _summary(cells: _Cells, statistic, pick_a, pick_b=None):
    """Estimate, replicates and interval of ``statistic`` (as :func:`.prevalence._summary`,
    with the acceleration of :func:`_acceleration`)."""
    boot = cells.boot
    theta_hat = statistic(*cells.units.totals())
    theta_b = statistic(*cells.reps)
    accel = _acceleration(cells.units, pick_a, pick_b) if boot.interval == "bca" else None
    lo, hi = bs.interval(theta_hat, theta_b, boot.ci, boot.interval, accel)
    return theta_hat, theta_b, lo, hi


def _prevalence_table(cells: _Cells, min_period_docs: int) -> pd.DataFrame:
    boot = cells.boot
    k = cells.estimate.shape[1]
    n_src, n_per = len(cells.sources), len(cells.index)
    n_cells = n_src * n_per
    lo = np.full((n_cells, k), np.nan)
    hi, se = lo.copy(), lo.copy()
    one = np.eye(len(cells.measured))
    _, theta_b, m_lo, m_hi = _summary(cells, _prevalence_stat, one)
    lo[cells.measured] = m_lo.reshape(-1, k)
    hi[cells.measured] = m_hi.reshape(-1, k)
    se[cells.measured] = theta_b.std(axis=0, ddof=1).reshape(-1, k)
    cell = np.repeat(np.arange(n_cells), k)
    frame = pd.DataFrame(
        {
            "source": np.asarray(cells.sources, dtype=object)[cell // n_per],
            **_period_columns(cells.index, cell % n_per),
            "topic": np.tile(np.arange(k), n_cells),
            "prevalence": cells.estimate.ravel(),
            "ci_low": lo.ravel(),
            "ci_high": hi.ravel(),
            "std_error": se.ravel(),
            "n_documents": cells.n_documents[cell],
            "n_units": cells.n_units[cell],
            "total_weight": cells.total_weight[cell],
            "few_documents": cells.sparse[cell],
        }
    )
    return frame.assign(
        min_period_docs=min_period_docs, freq=cells.freq, **cells.columns, **boot.columns()
    )


def _differences_table(cells: _Cells, against: str, fdr: float) -> pd.DataFrame:
    """One row per (comparison, period, topic) where neither side has too few documents."""
    names, n_per = cells.sources, len(cells.index)
    k = cells.estimate.shape[1]
    if len(names) < 2:
        msg = (
            f"Differences over time need at least two sources; the data has {names}. Use "
            "prevalence_over_time() for one source."
        )
        raise ComparisonError(msg)
    n_src = len(names)
    if against == "each":
        pairs = [((a,), (b,)) for a in range(n_src) for b in range(a + 1, n_src)]
        labels = [(names[a[0]], names[b[0]]) for a, b in pairs]
    else:
        pairs = [((a,), tuple(b for b in range(n_src) if b != a)) for a in range(n_src)]
        labels = [(names[a[0]], "rest") for a, _ in pairs]
    usable = np.zeros(n_src * n_per, dtype=bool)
    usable[cells.measured] = True
    usable &= ~cells.sparse
    position = np.full(n_src * n_per, -1)
    position[cells.measured] = np.arange(len(cells.measured))
    rows = []  # (comparison, period)
    side_a, side_b = [], []
    for c, (a, b) in enumerate(pairs):
        for t in range(n_per):
            left = [s * n_per + t for s in a if usable[s * n_per + t]]
            right = [s * n_per + t for s in b if usable[s * n_per + t]]
            if len(left) == len(a) and right:
                rows.append((c, t))
                side_a.append(position[left])
                side_b.append(position[right])
    columns = [
        "source", "other", "period", "period_start", "period_end", "topic", "prevalence",
        "prevalence_other", "difference", "diff_ci_low", "diff_ci_high", "p_value",
        "p_adjusted", "significant",
    ]  # fmt: skip
    if not rows:
        return pd.DataFrame(columns=columns)
    m = len(cells.measured)
    pick_a = np.zeros((len(rows), m))
    pick_b = np.zeros((len(rows), m))
    for i, (a, b) in enumerate(zip(side_a, side_b, strict=True)):
        pick_a[i, a], pick_b[i, b] = 1.0, 1.0

    def pooled(pick, num, den):
        return (
            np.einsum("cm,...mk->...ck", pick, num)
            / np.einsum("cm,...m->...c", pick, den)[..., None]
        )

    def diff_stat(num, den):
        out = pooled(pick_a, num, den) - pooled(pick_b, num, den)
        return out.reshape(*out.shape[:-2], -1)

    boot = cells.boot
    d_hat, d_b, d_lo, d_hi = _summary(cells, diff_stat, pick_a, pick_b)
    totals = cells.units.totals()
    p = bs.centred_p_value(d_hat, d_b)
    comparison = np.repeat([c for c, _ in rows], k)
    p_adj = np.empty_like(p)
    for c in np.unique(comparison):  # BH across topics x periods of each comparison
        p_adj[comparison == c] = bs.benjamini_hochberg(p[comparison == c])
    period = np.repeat([t for _, t in rows], k)
    frame = pd.DataFrame(
        {
            "source": np.asarray([labels[c][0] for c in comparison], dtype=object),
            "other": np.asarray([labels[c][1] for c in comparison], dtype=object),
            **_period_columns(cells.index, period),
            "topic": np.tile(np.arange(k), len(rows)),
            "prevalence": pooled(pick_a, *totals).ravel(),
            "prevalence_other": pooled(pick_b, *totals).ravel(),
            "difference": d_hat,
            "diff_ci_low": d_lo,
            "diff_ci_high": d_hi,
            "p_value": p,
            "p_adjusted": p_adj,
            "significant": p_adj <= fdr,
        }
    )
    test = "bootstrap, two-sided, centred (Hall & Wilson 1991); BH across topics x periods"
    return frame.assign(freq=cells.freq, **cells.columns, test=test, **boot.columns(), fdr=fdr)


def over_time_tables(
    fit,
    prepared,
    *,
    freq: str | None = default("freq"),
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    min_period_docs: int = default("min_period_docs"),
    against: str = default("against"),
    fdr: float = default("fdr"),
    **bootstrap,
) -> tuple[pd.DataFrame, pd.DataFrame | None]:
    """Both tables from one set of replicates: prevalence over time, and differences over
    time (None with one source). Parameters as in :func:`prevalence_over_time` and
    :func:`differences_over_time`."""
    owner = "prevalence_over_time"
    check(owner, "against", against)
    if not (isinstance(fdr, float) and 0 < fdr < 1):
        raise param_error(owner, "fdr", fdr, "a number strictly between 0 and 1")
    cells = _cells(
        owner, fit, prepared, freq, weighting, cluster, sources, min_period_docs, bootstrap
    )
    prev = _prevalence_table(cells, min_period_docs)
    diff = _differences_table(cells, against, fdr) if len(cells.sources) > 1 else None
    return prev, diff


@_bootstrap_keywords
def prevalence_over_time(
    fit,
    prepared,
    *,
    freq: str | None = default("freq"),
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    min_period_docs: int = default("min_period_docs"),
    **bootstrap,
) -> pd.DataFrame:
    """Prevalence of every topic in every source and period, with bootstrap intervals.

    Parameters
    ----------
    fit, prepared : as in :func:`tm_compare.compare.prevalence.prevalence`; the prepared
        corpus's ``meta`` needs a ``date`` column (documents without a date are left out,
        with a warning).
    freq : None or "D", "W", "M", "Q", "Y"
        Length of a period; None takes the finest giving at most :data:`MAX_PERIODS` periods.
    min_period_docs : int
        Cells (source, period) with fewer documents are marked ``few_documents``.
    weighting, cluster, sources and the bootstrap settings (``n_boot`` to ``random_state``):
        as in :func:`~tm_compare.compare.prevalence.prevalence`; every (source, period) cell is
        a stratum (``cap_group_share`` caps a cluster's share of its source over all dates).

    Raises ComparisonError when the corpus has no dates (naming unreadable values when intake
    flagged some), when dates are not dates, or for the faults :func:`prevalence` names.

    Returns
    -------
    DataFrame, one row per (source, period, topic), every period of the span included:
    ``source``, ``period`` (e.g. ``2024-03``, or ``2024-03-04/2024-03-10`` for a week),
    ``period_start``, ``period_end`` (last day), ``topic``, ``prevalence`` (NaN in an empty
    cell), ``ci_low``, ``ci_high``, ``std_error`` (NaN with a single resampling unit),
    ``n_documents``, ``n_units``, ``total_weight``, ``few_documents``, then the settings
    ``min_period_docs``, ``freq``, ``weighting``, ``cluster``, ``interval``, ``ci_level``,
    ``n_boot``, ``resampling``, ``model_uncertainty``, ``cap_group_share``.
    """
    owner = "prevalence_over_time"
    cells = _cells(
        owner, fit, prepared, freq, weighting, cluster, sources, min_period_docs, bootstrap
    )
    return _prevalence_table(cells, min_period_docs)


@_bootstrap_keywords
def differences_over_time(
    fit,
    prepared,
    *,
    freq: str | None = default("freq"),
    against: str = default("against"),
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    min_period_docs: int = default("min_period_docs"),
    fdr: float = default("fdr"),
    **bootstrap,
) -> pd.DataFrame:
    """Differences in prevalence between sources within each period.

    Periods where either side has ``few_documents`` (see :func:`prevalence_over_time`) are skipped.
    p-values are adjusted by Benjamini & Hochberg (1995) across every topic and period of a
    comparison. Parameters as in :func:`prevalence_over_time` and
    :func:`~tm_compare.compare.prevalence.differences`.

    Returns
    -------
    DataFrame, one row per (comparison, period, topic): ``source``, ``other``, ``period``,
    ``period_start``, ``period_end``, ``topic``, ``prevalence``, ``prevalence_other``,
    ``difference`` (source minus other), ``diff_ci_low``, ``diff_ci_high``, ``p_value``,
    ``p_adjusted``, ``significant``, ``freq``, ``weighting``, ``cluster``, ``test``, the
    bootstrap settings and ``fdr``.
    """
    owner = "differences_over_time"
    check(owner, "against", against)
    if not (isinstance(fdr, float) and 0 < fdr < 1):
        raise param_error(owner, "fdr", fdr, "a number strictly between 0 and 1")
    cells = _cells(
        owner, fit, prepared, freq, weighting, cluster, sources, min_period_docs, bootstrap
    )
    return _differences_table(cells, against, fdr)
