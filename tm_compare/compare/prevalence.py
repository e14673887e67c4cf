"""Topic prevalence by source, differences between sources, and the influence check.

Prevalence of topic k in source s is the weighted mean of the document-topic
shares ``theta_dk`` over the documents of s. The weighting is an explicit
choice, stated in a column of every table:

- ``"exposure"``: each document counts with its ``weight`` (how often readers met it);
- ``"unique"``: each article counts once (what the source offered).

Uncertainty comes from a bootstrap stratified by source that resamples whole
clusters (the ``cluster`` column, e.g. the reader or outlet in ``group``) when
clusters are given, documents otherwise (Field & Welsh 2007; Cameron, Gelbach &
Miller 2008): one reader's thousand visits are one observation, not a thousand.
Documents with no cluster value are clusters of their own. Documents of weight
0 never count and are not resampled. Strata are sources: a cluster seen in two
sources (a reader who shares and visits) is resampled separately in each, which
treats the sources as independent samples; when a reader's habits are alike in
both sources (positive correlation) this makes intervals of differences wider
than they need be, i.e. conservative.

Every table has the columns ``weighting`` and ``cluster`` (the cluster column's
name, or ``"document"`` when documents are resampled), and the bootstrap's settings.
Defaults come from :mod:`tm_compare.options`.
"""

from __future__ import annotations

import inspect
import warnings
from dataclasses import dataclass, fields, replace

import numpy as np
import pandas as pd

from .._deprecation import renamed_parameters
from .._validation import check_limit, param_error
from ..errors import ComparisonError
from ..models.fits import check_pair
from ..options import check, default
from . import _bootstrap as bs

_POISSON_MIN_UNITS = 30


@dataclass(frozen=True)
class Bootstrap:
    """The bootstrap settings of :func:`prevalence` and :func:`differences`, which take them as
    keyword arguments (see :func:`prevalence` for their meaning)."""

    n_boot: int = default("n_boot")
    ci: float = default("ci")
    interval: str = default("interval")
    resampling: str = default("resampling")
    model_uncertainty: bool = default("model_uncertainty")
    n_model_draws: int = default("n_model_draws")
    cap_group_share: float | None = default("cap_group_share")
    random_state: object = default("random_state")

    @classmethod
    def of(cls, owner: str, settings: dict) -> Bootstrap:
        """The settings given to ``owner``, checked."""
        unknown = sorted(set(settings) - {f.name for f in fields(cls)})
        if unknown:
            known = ", ".join(f.name for f in fields(cls))
            msg = (
                f"{owner}() got unexpected keyword argument(s) {unknown}; its bootstrap "
                f"settings are {known}."
            )
            raise TypeError(msg)
        boot = cls(**settings)
        if not (isinstance(boot.n_boot, int | np.integer) and boot.n_boot >= 10):
            raise param_error(owner, "n_boot", boot.n_boot, "an integer >= 10")
        check_limit(owner, "n_boot", boot.n_boot, "n_boot")
        seed = boot.random_state
        if not isinstance(seed, np.random.Generator) and (
            isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0
        ):
            raise param_error(owner, "random_state", seed, "an integer >= 0 or a numpy Generator")
        if not (isinstance(boot.ci, float) and 0 < boot.ci < 1):
            raise param_error(owner, "ci", boot.ci, "a number strictly between 0 and 1, e.g. 0.95")
        check(owner, "interval", boot.interval)
        check(owner, "resampling", boot.resampling)
        return boot

    def columns(self) -> dict:
        """The settings written beside every table."""
        return {
            "interval": self.interval,
            "ci_level": self.ci,
            "n_boot": self.n_boot,
            "resampling": self.resampling,
            "model_uncertainty": bool(self.model_uncertainty),
            "cap_group_share": self.cap_group_share,
        }


def _bootstrap_keywords(func):
    """Show the :class:`Bootstrap` settings in ``func``'s signature (help, tab completion) in
    place of its ``**bootstrap``."""
    signature = inspect.signature(func)
    params = [p for p in signature.parameters.values() if p.kind is not p.VAR_KEYWORD]
    params += [
        inspect.Parameter(
            f.name, inspect.Parameter.KEYWORD_ONLY, default=f.default, annotation=f.type
        )
        for f in fields(Bootstrap)
    ]
    func.__signature__ = signature.replace(parameters=params)
    return func


@dataclass(frozen=True)
class _Design:
    """Everything the bootstrap needs, checked once."""

    shares: np.ndarray  # (D, k) of the kept documents
    weights: np.ndarray  # (D,)
    strata: np.ndarray  # (D,) index into sources
    sources: list[str]
    clusters: np.ndarray | None  # (D,) codes, -1 for none; None: document-level
    unit_of: np.ndarray  # (D,) resampling unit of each document (see bs.unit_codes)
    cluster: str  # name stated in the output
    weighting: str
    dirichlet: np.ndarray | None  # (D, k) or None

    def units(self, shares: np.ndarray | None = None) -> bs.Units:
        use = self.shares if shares is None else shares
        return bs.unit_sums(use, self.weights, self.strata, self.unit_of, len(self.sources))

    def columns(self) -> dict:
        return {"weighting": self.weighting, "cluster": self.cluster}


def _design(fit, prepared, owner, weighting, cluster, sources, cap_group_share=None) -> _Design:
    check(owner, "weighting", weighting)
    check_pair(owner, fit, prepared)
    shares = np.asarray(fit.doc_topic, dtype=float)
    n_docs = len(prepared.meta)
    k = int(fit.k)
    if shares.ndim != 2 or shares.shape != (n_docs, k):
        msg = (
            f"The model's doc_topic has shape {shares.shape}, but the prepared corpus has "
            f"{n_docs} documents and the model has k={k} topics; {owner} needs ({n_docs}, {k}). "
            "Use the fit that was trained on this prepared corpus (same preparation settings)."
        )
        raise ComparisonError(msg)
    corpus_ids = prepared.doc_ids
    if fit.doc_ids != corpus_ids:
        msg = (
            f"The model's doc_ids do not match the prepared corpus's document ids ({owner}). "
            "The fit was trained on a different prepared corpus: prepare with the same settings "
            "or use the matching fit."
        )
        raise ComparisonError(msg)
    # Rows summing to finite numbers hold only finite shares (one cheap pass first).
    with np.errstate(over="ignore"):
        finite = np.isfinite(shares.sum(axis=1)).all()
    bad = None if finite else ~np.isfinite(shares).all(axis=1)
    if bad is not None and bad.any():
        first = corpus_ids[np.flatnonzero(bad)[0]]
        msg = (
            f"The model's doc_topic has NaN or infinite shares in {int(bad.sum())} document(s) "
            f"(first: id {first!r}); {owner} cannot average them. Refit the model, or drop "
            "those documents from the corpus before preparing it."
        )
        raise ComparisonError(msg)
    # The column itself: factorizing it is many times faster than its numpy string array.
    source = prepared.meta["source"].astype(str)  # a no-op for a string column
    codes, uniques = pd.factorize(source, sort=True, use_na_sentinel=False)
    present = [str(s) for s in uniques]
    wanted = present if sources is None else [str(s) for s in sources]
    missing = [s for s in wanted if s not in present]
    if missing:
        msg = (
            f"The source(s) {missing} given to {owner} have no documents after preparation. "
            f"Sources with documents: {present}. Check the source names, or the removal log "
            "(prepared.report) for why their documents were removed."
        )
        raise ComparisonError(msg)
    position = np.array([wanted.index(s) if s in wanted else -1 for s in present])
    keep = position[codes] >= 0
    strata = position[codes][keep]
    weights = (
        np.asarray(prepared.weights, dtype=float)[keep]
        if weighting == "exposure"
        else np.ones(int(keep.sum()))
    )
    bad_weight = ~np.isfinite(weights) | (weights < 0)
    if bad_weight.any():
        msg = (
            f"The 'weight' column must hold finite numbers >= 0 for {owner}; {int(bad_weight.sum())} "
            f"document(s) do not (first value: {weights[bad_weight][0]!r}). Fix the corpus's weight "
            "column, or use weighting='unique'."
        )
        raise ComparisonError(msg)
    for i, name in enumerate(wanted):
        if weights[strata == i].sum() <= 0:
            msg = (
                f"All documents of source {name!r} have weight 0, so their exposure-weighted "
                f"prevalence is undefined ({owner}). Use weighting='unique', or fix the "
                "corpus's weight column."
            )
            raise ComparisonError(msg)
    clusters, cluster_name = _clusters(prepared, cluster, keep, strata, wanted, owner)
    dirichlet = fit.doc_dirichlet
    if keep.all():  # the usual case: skip copying a D x k matrix
        keep = slice(None)
    design = _Design(
        shares=shares[keep],
        weights=weights,
        strata=strata,
        sources=wanted,
        clusters=clusters,
        unit_of=bs.unit_codes(strata, clusters),
        cluster=cluster_name,
        weighting=weighting,
        dirichlet=None if dirichlet is None else np.asarray(dirichlet, dtype=float)[keep],
    )
    if cap_group_share is not None:
        design = replace(design, weights=_cap_weights(design, cap_group_share, owner))
    return design


def _cluster_values(prepared, cluster, owner, accepted="None, 'group'") -> pd.Series:
    """Each document's cluster: its group, or the value of ``cluster`` in ``prepared.meta``."""
    if cluster == "group":
        return pd.Series(np.asarray(prepared.groups, dtype=object))
    if cluster in prepared.meta.columns:
        return prepared.meta[cluster].reset_index(drop=True)
    columns = ", ".join(map(repr, prepared.meta.columns))
    raise param_error(
        owner, "cluster", cluster, f"{accepted} or a column of prepared.meta: {columns}"
    )


def _clusters(prepared, cluster, keep, strata, sources, owner):
    if cluster is None:
        return None, "document"
    values = _cluster_values(prepared, cluster, owner)
    codes = pd.factorize(values.to_numpy()[keep], use_na_sentinel=True)[0]
    if (codes < 0).all():
        return None, "document"
    for i, name in enumerate(sources):
        in_source = codes[strata == i]
        n_units = len(np.unique(in_source[in_source >= 0])) + int((in_source < 0).sum())
        if n_units < 2:
            msg = (
                f"Source {name!r} has a single cluster in column {cluster!r}, so resampling "
                f"clusters cannot measure uncertainty ({owner}). Use cluster=None to resample "
                "documents, or a column with several clusters per source."
            )
            raise ComparisonError(msg)
    return codes.astype(np.int64), str(cluster)


def _cap_weights(design: _Design, cap: float, owner: str) -> np.ndarray:
    """Cap each cluster's share of its source's weight at ``cap``, iteratively.

    The excess of clusters above the cap is handed to the others in proportion to their
    weight, repeatedly until no cluster exceeds the cap; each source's total is kept.
    """
    if not (isinstance(cap, float | int) and 0 < cap <= 1):
        raise param_error(owner, "cap_group_share", cap, "a number in (0, 1]")
    if design.clusters is None:
        msg = f"cap_group_share needs clusters to cap, but {owner} got cluster=None. Pass cluster='group' (or another column)."
        raise ComparisonError(msg)
    weights = design.weights.copy()
    units = design.unit_of
    unit_weight = np.bincount(units, weights=weights)
    unit_stratum = np.zeros(len(unit_weight), dtype=np.int64)
    unit_stratum[units] = design.strata
    factor = np.ones(len(unit_weight))
    for s, name in enumerate(design.sources):
        idx = np.flatnonzero((unit_stratum == s) & (unit_weight > 0))
        share = unit_weight[idx] / unit_weight[idx].sum()
        if len(idx) * cap < 1:
            msg = (
                f"Source {name!r} has {len(idx)} clusters, so no cluster's share can be capped at "
                f"{cap} ({owner}): the cap must be at least 1/{len(idx)}. Raise cap_group_share."
            )
            raise ComparisonError(msg)
        new = _water_fill(share, cap)
        factor[idx] = new / share
    return weights * factor[units]


def _water_fill(share: np.ndarray, cap: float) -> np.ndarray:
    capped = np.zeros(len(share), dtype=bool)
    new = share.copy()
    while (over := (new > cap * (1 + 1e-12)) & ~capped).any():
        capped |= over
        free = 1 - cap * capped.sum()
        new = np.where(capped, cap, share * free / share[~capped].sum())
    return new


def _prevalence_stat(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    out = num / den[..., None]
    return out.reshape(*out.shape[:-2], -1)


@dataclass(frozen=True)
class Replicates:
    """One bootstrap drawn: its checked settings, design, resampling units and replicates.

    :func:`prevalence` and :func:`differences` given the same settings draw the same
    replicates (the seed is the same); :func:`replicates` draws them once, and
    :func:`prevalence_table` and :func:`differences_table` read them, with the same numbers.
    """

    boot: Bootstrap
    design: _Design
    units: bs.Units
    reps: tuple


def _run(owner, fit, prepared, weighting, cluster, sources, settings: dict) -> Replicates:
    """The checked settings, the design and the bootstrap replicates of ``owner``."""
    boot = Bootstrap.of(owner, settings)
    design = _design(fit, prepared, owner, weighting, cluster, sources, boot.cap_group_share)
    return Replicates(boot, design, *_replicates(design, boot, owner))


@_bootstrap_keywords
def replicates(
    fit,
    prepared,
    *,
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    **bootstrap,
) -> Replicates:
    """The bootstrap of :func:`prevalence` and :func:`differences`, drawn once for both (same
    parameters and errors as :func:`prevalence`); read it with :func:`prevalence_table` and
    :func:`differences_table`."""
    return _run("prevalence", fit, prepared, weighting, cluster, sources, bootstrap)


def _replicates(design, boot: Bootstrap, owner):
    units = design.units()
    fewest = min(b - a for a, b in units.bounds())
    if fewest < 2:
        msg = (
            f"A source has a single resampling unit (one document or cluster with weight > 0), "
            f"so the bootstrap cannot measure its uncertainty ({owner}). Drop that source with "
            "sources=[...], or add documents."
        )
        raise ComparisonError(msg)
    if boot.resampling == "poisson" and fewest < _POISSON_MIN_UNITS:
        # With n units, a Poisson replicate draws none of them with probability exp(-n).
        msg = (
            f"resampling='poisson' needs at least {_POISSON_MIN_UNITS} resampling units per "
            f"source; one source has {fewest} ({owner}). Use resampling='multinomial'."
        )
        raise ComparisonError(msg)
    rng = np.random.default_rng(boot.random_state)
    if not boot.model_uncertainty:
        return units, bs.replicate(units, boot.n_boot, rng, boot.resampling)
    if design.dirichlet is None:
        msg = (
            f"model_uncertainty=True needs the fit's doc_dirichlet (variational Dirichlet "
            f"parameters), but this fit has none ({owner}). Use a gensim fit, or "
            "model_uncertainty=False."
        )
        raise ComparisonError(msg)

    def redraw(gen):
        draw = gen.standard_gamma(design.dirichlet)
        return design.units(draw / draw.sum(axis=1, keepdims=True))

    draws = min(boot.n_model_draws, boot.n_boot)
    return units, bs.replicate(units, boot.n_boot, rng, boot.resampling, redraw, draws)


def _summary(units, reps, statistic, ci, interval, acceleration):
    """Estimate, replicates and interval; for BCa, ``acceleration(units)`` is the closed
    form of the jackknife of ``statistic`` (each is tested against the generic
    :func:`._bootstrap.jackknife_acceleration`)."""
    theta_hat = statistic(*units.totals())
    theta_b = statistic(*reps)
    accel = acceleration(units) if interval == "bca" else None
    lo, hi = bs.interval(theta_hat, theta_b, ci, interval, accel)
    return theta_hat, theta_b, lo, hi


@_bootstrap_keywords
def prevalence(
    fit,
    prepared,
    *,
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    **bootstrap,
) -> pd.DataFrame:
    """Prevalence of every topic in every source, with bootstrap intervals.

    Parameters
    ----------
    fit : Fit (``doc_topic`` D x k, ``k``, ``doc_ids``, ``doc_dirichlet``).
    prepared : PreparedCorpus (``sources``, ``weights``, ``groups``, ``meta``).
    weighting : "exposure" (document weights) or "unique" (each article once).
    cluster : "group", another column of ``prepared.meta``, or None to resample documents.
    sources : sources to include, in output order (default: all, sorted).
    n_boot, ci : replicates and interval level.
    interval : "percentile" or "bca" (Efron & Tibshirani 1993, ch. 14; acceleration from a
        jackknife over clusters within each source, on the point estimates of the shares).
    resampling : "multinomial" (classical; the resamples ``scipy.stats.bootstrap`` draws
        from the same generator) or "poisson" (independent Poisson(1) counts per unit; about
        as fast: both are drawn in compiled code).
    model_uncertainty : also draw shares from each document's Dirichlet(``doc_dirichlet``);
        replicates run in ``n_model_draws`` batches, one fresh draw per batch (each draw
        costs D x k gamma variates, so this is much slower on large corpora).
    cap_group_share : cap every cluster's share of its source's weight (see :func:`influence`).
    random_state : seed or ``numpy.random.Generator``.
    The bootstrap settings (``n_boot`` to ``random_state``) are those of :class:`Bootstrap`.

    Raises ComparisonError, naming the fault and the fix, when: the fit does not match the
    corpus (shape, k or document ids), a share is NaN, a named source has no documents,
    a source's weights are all 0 (exposure weighting), a source has a single resampling
    unit or a single cluster, or weights are negative. A single source is fine here
    (:func:`differences` needs two).

    Returns
    -------
    DataFrame, one row per (source, topic): ``source``, ``topic``, ``prevalence``, ``ci_low``,
    ``ci_high``, ``std_error`` (replicates' standard deviation), ``n_documents``, ``n_units``
    (clusters or documents resampled), ``total_weight``, then the settings ``weighting``,
    ``cluster``, ``interval``, ``ci_level``, ``n_boot``, ``resampling``,
    ``model_uncertainty``, ``cap_group_share``.
    """
    return prevalence_table(
        _run("prevalence", fit, prepared, weighting, cluster, sources, bootstrap)
    )


def prevalence_table(run: Replicates) -> pd.DataFrame:
    """The table of :func:`prevalence` from its drawn bootstrap (see :func:`replicates`)."""
    boot, design, units, reps = run.boot, run.design, run.units, run.reps
    theta_hat, theta_b, lo, hi = _summary(
        units, reps, _prevalence_stat, boot.ci, boot.interval, bs.stratum_acceleration
    )
    n_src, k = len(design.sources), design.shares.shape[1]
    frame = pd.DataFrame(
        {
            "source": np.repeat(design.sources, k),
            "topic": np.tile(np.arange(k), n_src),
            "prevalence": theta_hat,
            "ci_low": lo,
            "ci_high": hi,
            "std_error": theta_b.std(axis=0, ddof=1),
            "n_documents": np.repeat(np.bincount(design.strata, minlength=n_src), k),
            "n_units": np.repeat(np.bincount(units.stratum, minlength=n_src), k),
            "total_weight": np.repeat(units.totals()[1], k),
        }
    )
    return frame.assign(**design.columns(), **boot.columns())


@_bootstrap_keywords
def differences(
    fit,
    prepared,
    *,
    against: str = default("against"),
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    sources=None,
    fdr: float = default("fdr"),
    **bootstrap,
) -> pd.DataFrame:
    """Differences in topic prevalence between sources, with intervals and BH-adjusted p-values.

    ``against="each"`` compares every pair of sources (a, b) with a before b in source order;
    ``against="rest"`` compares each source with all other sources pooled. Other parameters
    as in :func:`prevalence`; all comparisons share one set of replicates.

    The p-value per topic is the two-sided bootstrap test of "difference = 0" from the
    centred replicate distribution (Hall & Wilson 1991): ``(1 + #{|d* - d| >= |d|}) / (B + 1)``.
    Within each comparison the p-values of the k topics are adjusted by Benjamini & Hochberg
    (1995); ``significant`` is ``p_adjusted <= fdr``.

    Returns
    -------
    DataFrame, one row per (comparison, topic), sorted by comparison, then ``p_adjusted``
    ascending and absolute difference descending (most different first): ``source``,
    ``other``, ``topic``, ``prevalence``, ``prevalence_other``, ``difference`` (source minus
    other), ``diff_ci_low``, ``diff_ci_high``, ``ratio`` (source / other), ``ratio_ci_low``,
    ``ratio_ci_high``, ``p_value``, ``p_adjusted``, ``significant``, ``rank`` (1 = most
    different), ``test``, then the settings as in :func:`prevalence` plus ``fdr``.
    """
    owner = "differences"
    _check_comparison(owner, against, fdr)
    run = _run(owner, fit, prepared, weighting, cluster, sources, bootstrap)
    return differences_table(run, against=against, fdr=fdr)


def _check_comparison(owner: str, against, fdr) -> None:
    check(owner, "against", against)
    if not (isinstance(fdr, float) and 0 < fdr < 1):
        raise param_error(owner, "fdr", fdr, "a number strictly between 0 and 1")


def differences_table(
    run: Replicates, *, against: str = default("against"), fdr: float = default("fdr")
) -> pd.DataFrame:
    """The table of :func:`differences` from its drawn bootstrap (see :func:`replicates`)."""
    _check_comparison("differences", against, fdr)
    boot, design, units, reps = run.boot, run.design, run.units, run.reps
    names = design.sources
    if len(names) < 2:
        msg = (
            f"differences needs at least two sources; the data has {names}. Use prevalence() "
            "for one source, or add documents from another source."
        )
        raise ComparisonError(msg)
    n_src = len(names)
    if against == "each":
        pairs = [([a], [b]) for a in range(n_src) for b in range(a + 1, n_src)]
        labels = [(names[a[0]], names[b[0]]) for a, b in pairs]
    else:
        pairs = [([a], [b for b in range(n_src) if b != a]) for a in range(n_src)]
        labels = [(names[a[0]], "rest") for a, _ in pairs]

    def pooled(num, den, idx):
        return num[..., idx, :].sum(axis=-2) / den[..., idx].sum(axis=-1)[..., None]

    def diff_stat(num, den):
        return np.concatenate([pooled(num, den, a) - pooled(num, den, b) for a, b in pairs], -1)

    def ratio_stat(num, den):
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.concatenate([pooled(num, den, a) / pooled(num, den, b) for a, b in pairs], -1)

    def level_stat(num, den):
        return np.concatenate(
            [np.concatenate([pooled(num, den, a), pooled(num, den, b)], -1) for a, b in pairs], -1
        )

    def accel(combine):  # the BCa jackknife in closed form (see bs.pooled_acceleration)
        return lambda units: bs.pooled_acceleration(units, pairs, combine)

    d_hat, d_b, d_lo, d_hi = _summary(
        units, reps, diff_stat, boot.ci, boot.interval, accel(np.subtract)
    )
    r_hat, _, r_lo, r_hi = _summary(
        units, reps, ratio_stat, boot.ci, boot.interval, accel(np.divide)
    )
    levels = level_stat(*units.totals()).reshape(len(pairs), 2, -1)
    k = design.shares.shape[1]
    p = bs.centred_p_value(d_hat, d_b)
    p_adj = np.concatenate(
        [bs.benjamini_hochberg(p[i * k : (i + 1) * k]) for i in range(len(pairs))]
    )
    frame = pd.DataFrame(
        {
            "source": np.repeat([a for a, _ in labels], k),
            "other": np.repeat([b for _, b in labels], k),
            "topic": np.tile(np.arange(k), len(pairs)),
            "prevalence": levels[:, 0].ravel(),
            "prevalence_other": levels[:, 1].ravel(),
            "difference": d_hat,
            "diff_ci_low": d_lo,
            "diff_ci_high": d_hi,
            "ratio": r_hat,
            "ratio_ci_low": r_lo,
            "ratio_ci_high": r_hi,
            "p_value": p,
            "p_adjusted": p_adj,
            "significant": p_adj <= fdr,
        }
    )
    frame["_order"] = np.repeat(np.arange(len(pairs)), k)
    frame["_abs"] = -frame["difference"].abs()
    frame = frame.sort_values(["_order", "p_adjusted", "_abs"], kind="stable")
    frame["rank"] = frame.groupby("_order").cumcount() + 1
    frame = frame.drop(columns=["_order", "_abs"]).reset_index(drop=True)
    test = "bootstrap, two-sided, centred (Hall & Wilson 1991); BH across topics"
    return frame.assign(**design.columns(), test=test, **boot.columns(), fdr=fdr)


@renamed_parameters(top="n_groups")
def influence(
    prepared,
    *,
    threshold: float = 0.10,
    weighting: str = default("weighting"),
    cluster: str = default("cluster"),
    n_groups: int = default("n_groups"),
    warn: bool = True,
) -> pd.DataFrame:
    """Which clusters carry the most weight in each source; flag those above ``threshold``.

    A cluster (a reader, an outlet) that carries a large share of a source's weight can
    drive that source's prevalence on its own. Documents with no cluster value are
    clusters of their own (labelled by document id).

    Returns
    -------
    DataFrame with the ``n_groups`` heaviest clusters of each source (formerly ``top``), plus
    every flagged one:
    ``source``, ``group`` (the cluster value), ``rank``, ``n_documents``, ``weight``,
    ``share`` (of the source's weight), ``flagged`` (``share > threshold``), ``threshold``,
    ``weighting``, ``cluster``. With ``warn``, a ``UserWarning`` names each flagged cluster.
    See :func:`cap_effect` for the effect of capping shares on prevalence.
    """
    owner = "influence"
    check(owner, "weighting", weighting)
    if not (isinstance(threshold, float) and 0 < threshold < 1):
        raise param_error(owner, "threshold", threshold, "a number strictly between 0 and 1")
    if not (isinstance(n_groups, int | np.integer) and n_groups >= 1):
        raise param_error(owner, "n_groups", n_groups, "an integer >= 1")
    values = _cluster_values(prepared, cluster, owner, accepted="'group'")
    # Only documents without a cluster value need their id as a label.
    labels = values.to_numpy(dtype=object, copy=True)
    missing = values.isna().to_numpy()
    if missing.any():
        ids = np.asarray(prepared.doc_ids, dtype=object)[missing]
        labels[missing] = [f"(document {i})" for i in ids]
    frame = pd.DataFrame(
        {
            "source": prepared.meta["source"].astype(str).to_numpy(),
            "weight": np.asarray(prepared.weights, dtype=float) if weighting == "exposure" else 1.0,
            "group": pd.Series(labels, dtype=object),
        }
    )
    table = (
        frame.groupby(["source", "group"], sort=False)
        .agg(n_documents=("weight", "size"), weight=("weight", "sum"))
        .reset_index()
    )
    table["share"] = table["weight"] / table.groupby("source")["weight"].transform("sum")
    table = table.sort_values(["source", "share"], ascending=[True, False], kind="stable")
    table["rank"] = table.groupby("source").cumcount() + 1
    table["flagged"] = table["share"] > threshold
    table = table[(table["rank"] <= n_groups) | table["flagged"]]
    flagged = table[table["flagged"]]
    if warn and len(flagged):
        listed = "; ".join(
            f"{g!r} carries {s:.0%} of {src!r}"
            for src, g, s in flagged[["source", "group", "share"]].itertuples(index=False)
        )
        warnings.warn(
            f"Clusters above the {threshold:.0%} share threshold ({weighting} weighting): {listed}. "
            "Their documents can drive those sources' prevalence; see cap_effect().",
            UserWarning,
            stacklevel=2,
        )
    cols = ["source", "group", "rank", "n_documents", "weight", "share", "flagged"]
    out = table[cols].reset_index(drop=True)
    return out.assign(threshold=threshold, weighting=weighting, cluster=cluster)


def cap_effect(
    fit,
    prepared,
    *,
    cap_group_share: float = 0.10,
    weighting: str = default("weighting"),
    cluster: str = default("cluster"),
    sources=None,
) -> pd.DataFrame:
    """Prevalence before and after capping each cluster's share of its source's weight.

    The weight above the cap is handed to the source's other clusters in proportion to
    their weight, repeatedly until no cluster is above the cap.

    Returns
    -------
    DataFrame, one row per (source, topic): ``source``, ``topic``, ``prevalence_before``,
    ``prevalence_after``, ``change``, ``cap_group_share``, ``weighting``, ``cluster``.
    """
    owner = "cap_effect"
    before = _design(fit, prepared, owner, weighting, cluster, sources)
    after = _design(fit, prepared, owner, weighting, cluster, sources, cap_group_share)
    k = before.shares.shape[1]
    b_hat = _prevalence_stat(*before.units().totals())
    a_hat = _prevalence_stat(*after.units().totals())
    frame = pd.DataFrame(
        {
            "source": np.repeat(before.sources, k),
            "topic": np.tile(np.arange(k), len(before.sources)),
            "prevalence_before": b_hat,
            "prevalence_after": a_hat,
            "change": a_hat - b_hat,
        }
    )
    return frame.assign(cap_group_share=cap_group_share, **before.columns())
