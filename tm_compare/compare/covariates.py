"""Topic prevalence regressed on document covariates: :func:`prevalence_model`.

Each topic's document shares are regressed on covariates of the documents (source, period,
outlet, reader traits: any column of ``prepared.meta``), written as a Wilkinson formula and
turned into a design matrix by ``formulaic``. Estimation is statsmodels' weighted least
squares (``WLS``; with ``weighting="unique"`` every weight is 1, i.e. OLS), with each
document's exposure as its weight as in :func:`tm_compare.compare.prevalence.prevalence`, and
cluster-robust standard errors (``cov_type="cluster"``, statsmodels' default small-sample
correction) by reader (``cluster="group"``), outlet or any column; ``cluster=None`` treats every
document as its own cluster.

The topic model's own uncertainty is carried through by the method of composition (Treier &
Jackman 2008, "Democracy as a latent variable", AJPS 52(1); used for topic prevalence by
Roberts et al. 2014, "Structural topic models for open-ended survey responses", AJPS 58(4)):
each of ``n_draws`` draws takes every document's shares from its variational Dirichlet
(``fit.doc_dirichlet``), the regression is refitted, and the draws are pooled. Pooling uses the
moments of the composition, with the finite-draw correction of Rubin's rules (Rubin 1987,
"Multiple imputation for nonresponse in surveys"): the estimate is the mean of the draws'
estimates, its variance the mean of their cluster-robust variances plus ``(1 + 1/M)`` times the
variance between draws; intervals and p-values are normal, as statsmodels gives them for
cluster-robust fits. ``n_draws=0`` uses the posterior mean shares (``fit.doc_topic``) once,
with no model uncertainty: the numbers are then statsmodels' own.

Besides coefficients, every covariate gets the estimated prevalence at each of its values
(categories; a numeric covariate at its quantiles) and the effect of moving from the first
value to each other one (a numeric covariate: one unit up), averaged over the documents'
observed other covariates with the regression weights ("average predictions", Hanmer & Kalkan
2013, AJPS 57(1)). Covariates interacting with others are averaged over the others too. A
categorical covariate with more than 30 values (readers as fixed effects) gets coefficients only.

A column ``period`` that ``prepared.meta`` does not hold is made from ``date`` (calendar
periods of ``freq``, default months), so ``"~ source * period"`` works on any dated corpus.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
from scipy import stats
from threadpoolctl import threadpool_limits

from .._validation import param_error
from ..errors import ComparisonError, InputError
from ..options import check, default

__all__ = ["PrevalenceModel", "prevalence_model"]

#: Settings written beside every table of :class:`PrevalenceModel`.
STATED = ("formula", "weighting", "cluster", "n_clusters", "n_docs", "n_draws", "ci_level")
#: Values shown for a numeric covariate (quantiles of its observed values).
QUANTILES = (0.1, 0.25, 0.5, 0.75, 0.9)
#: Numeric covariates with at most this many distinct values are shown at each of them.
FEW_VALUES = 12
#: Categorical covariates with more values than this (readers as fixed effects, raw dates) get
#: coefficients only, no prevalence or effect rows.
MAX_LEVELS = 30


class PrevalenceModel:
    """The fitted regressions of :func:`prevalence_model` (one per topic) and their tables.

    Attributes
    ----------
    coefficients : DataFrame
        ``topic``, ``term``, ``estimate``, ``std_error``, ``z``, ``p_value``, ``ci_low``,
        ``ci_high``, then the settings (:data:`STATED`).
    prevalence : DataFrame
        Estimated prevalence of each topic at each value of each covariate: ``topic``,
        ``covariate``, ``value``, ``estimate``, ``std_error``, ``ci_low``, ``ci_high``, settings.
    effects : DataFrame
        Differences in prevalence from the first value (``reference``) to each other ``value``
        of each covariate (numeric: one unit up), with ``z``, ``p_value``, intervals and
        ``p_adjusted`` (Benjamini-Hochberg over every row), settings.
    formula, settings
        The formula and the settings used.
    """

    def __init__(self, coefficients, prevalence, effects, formula, settings):
        self.coefficients = coefficients
        self.prevalence = prevalence
        self.effects = effects
        self.formula = formula
        self.settings = settings

    def __repr__(self) -> str:
        s = self.settings
        return (
            f"<PrevalenceModel {self.formula!r}: {s['n_docs']} documents, "
            f"{s['n_clusters']} clusters of {s['cluster']!r}, {s['n_draws']} draws>"
        )

    def tables(self) -> dict[str, pd.DataFrame]:
        """The three tables by the names the exports give them."""
        return {
            "model_coefficients": self.coefficients,
            "model_prevalence": self.prevalence,
            "model_effects": self.effects,
        }


def prevalence_model(
    fit,
    prepared,
    formula: str,
    *,
    topics=None,
    weighting: str = default("weighting"),
    cluster: str | None = default("cluster"),
    n_draws: int = default("n_draws"),
    ci: float = default("ci"),
    random_state: int = default("random_state"),
    freq: str = "M",
) -> PrevalenceModel:
    """Regress every topic's shares on covariates, with cluster-robust and model uncertainty.

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
        The prepared corpus ``fit`` was trained on; covariates are columns of ``prepared.meta``.
    formula : str
        The right-hand side of a formula in formulaic's syntax, e.g.
        ``"~ source * period + outlet"`` (``C(x)`` makes a number categorical).
    topics : list of int, optional
        Topics to model (default: all).
    weighting : {"exposure", "unique"}
        Documents weighted by their exposure (WLS), or each once (OLS).
    cluster : "group", a column of ``prepared.meta``, or None
        Clusters of the robust standard errors; None: every document alone. ``"group"`` on a
        corpus with no groups falls back to documents with a warning.
    n_draws : int
        Draws of the documents' shares from their Dirichlet (method of composition); 0 uses
        the posterior mean shares only (no topic-model uncertainty).
    ci : float
        Coverage of the intervals.
    random_state : int
        Seed of the draws.
    freq : str
        pandas period frequency of a ``period`` column made from ``date`` (when meta has none).

    Returns
    -------
    PrevalenceModel
    """
    owner = "prevalence_model"
    import statsmodels.api as sm
    from formulaic import Formula

    check(owner, "weighting", weighting)
    if not (isinstance(ci, float) and 0 < ci < 1):
        raise param_error(owner, "ci", ci, "a number strictly between 0 and 1, e.g. 0.95")
    if isinstance(n_draws, bool) or not isinstance(n_draws, int | np.integer) or n_draws < 0:
        raise param_error(owner, "n_draws", n_draws, "an integer >= 0 (0: posterior mean only)")
    formula = _rhs(formula, owner)
    try:
        needed = sorted(Formula(formula).required_variables)
    except Exception as exc:  # formulaic's parser errors have many types
        msg = f"The formula {formula!r} of {owner} cannot be read ({exc}). Write it like '~ source * period + outlet'."
        raise InputError(msg) from exc
    data = _covariates(prepared, needed, freq, owner, formula)
    k = int(fit.k)
    topics = list(range(k)) if topics is None else [int(t) for t in topics]
    bad = [t for t in topics if not 0 <= t < k]
    if bad:
        raise param_error(owner, "topics", bad, f"topic numbers from 0 to {k - 1}")
    if list(fit.doc_ids) != prepared.doc_ids:
        msg = (
            f"The fit's documents are not those of the prepared corpus ({owner}). Use the prepared "
            "corpus the fit was trained on: load_prepared(project, fit.corpus_fingerprint)."
        )
        raise ComparisonError(msg)

    weights = (
        np.asarray(prepared.weights, dtype=float)
        if weighting == "exposure"
        else np.ones(len(prepared))
    )
    rows = np.flatnonzero((weights > 0) & data[needed].notna().all(axis=1).to_numpy())
    if len(rows) < len(data):
        warnings.warn(
            f"{len(data) - len(rows)} document(s) have weight 0 or a missing value in "
            f"{', '.join(needed)} and are left out of {owner}.",
            UserWarning,
            stacklevel=2,
        )
    data = data.iloc[rows].reset_index(drop=True)
    weights = weights[rows]
    _check_levels(data, needed, owner)
    matrix = Formula(formula).get_model_matrix(data, na_action="raise")
    spec = matrix.model_spec
    names = list(matrix.columns)
    x = np.asarray(matrix, dtype=float)
    rank = np.linalg.matrix_rank(x)
    if rank < x.shape[1]:
        msg = (
            f"The formula {formula!r} gives {x.shape[1]} columns but only {rank} are independent "
            f"({owner}): some covariates are determined by others (e.g. an outlet that belongs "
            f"to one source). Columns: {', '.join(names)}. Drop or merge one of them."
        )
        raise InputError(msg)
    groups, cluster_name = _cluster_codes(prepared, cluster, rows, owner)
    n_clusters = len(np.unique(groups))
    if n_clusters < 2:
        msg = f"{owner} needs at least two clusters of {cluster_name!r}; the documents modelled form one. Use cluster=None."
        raise ComparisonError(msg)

    contrasts = _contrasts(spec, data, weights, needed)
    if n_draws == 0:
        draws = [np.asarray(fit.doc_topic, dtype=float)[rows][:, topics]]
    else:
        gamma = fit.doc_dirichlet
        if gamma is None:
            msg = (
                f"n_draws={n_draws} needs the fit's doc_dirichlet (variational Dirichlet "
                f"parameters), but this fit has none ({owner}). Use n_draws=0."
            )
            raise ComparisonError(msg)
        gamma = np.asarray(gamma, dtype=float)[rows]
        rng = np.random.default_rng(random_state)
        draws = []
        for _ in range(n_draws):
            g = rng.standard_gamma(gamma)
            draws.append((g / g.sum(axis=1, keepdims=True))[:, topics])

    # One math-library thread, as fits use: statsmodels runs many small SVDs, which a BLAS
    # spreading each over busy cores makes far slower.
    with threadpool_limits(limits=1):
        coef, pred, eff = _fit_topics(sm, x, weights, groups, draws, topics, names, contrasts)
    settings = {
        "formula": formula,
        "weighting": weighting,
        "cluster": cluster_name,
        "n_clusters": n_clusters,
        "n_docs": len(rows),
        "n_draws": n_draws,
        "ci_level": ci,
        "random_state": random_state,
    }
    coefficients = _finish(pd.concat(coef, ignore_index=True), ci, settings, tests=True)
    prevalence = _finish(_concat(pred, ["covariate", "value"]), ci, settings, tests=False)
    effects = _finish(_concat(eff, ["covariate", "value", "reference"]), ci, settings, tests=True)
    if len(effects):
        effects["p_adjusted"] = stats.false_discovery_control(effects["p_value"].to_numpy())
    return PrevalenceModel(coefficients, prevalence, effects, formula, settings)


def _fit_topics(sm, x, weights, groups, draws, topics, names, contrasts):
    """Per topic: statsmodels WLS with cluster-robust covariance on every draw, pooled."""
    coef, pred, eff = [], [], []
    for j, topic in enumerate(topics):
        params, covs = [], []
        for shares in draws:
            res = sm.WLS(shares[:, j], x, weights=weights).fit(
                cov_type="cluster", cov_kwds={"groups": groups}
            )
            params.append(np.asarray(res.params))
            covs.append(np.asarray(res.cov_params()))
        params, covs = np.array(params), np.array(covs)
        est, se = _pool(params, np.diagonal(covs, axis1=1, axis2=2))
        coef.append(pd.DataFrame({"topic": topic, "term": names, "estimate": est, "std_error": se}))
        for kind, out in (("prevalence", pred), ("effects", eff)):
            table = contrasts[kind]
            if not len(table):
                continue
            a = np.vstack(table["row"].to_numpy())
            est, se = _pool(params @ a.T, np.einsum("ci,mij,cj->mc", a, covs, a))
            out.append(table.drop(columns="row").assign(topic=topic, estimate=est, std_error=se))
    return coef, pred, eff


def _rhs(formula, owner: str) -> str:
    if not isinstance(formula, str) or not formula.strip():
        raise param_error(owner, "formula", formula, "a formula such as '~ source + outlet'")
    text = formula.strip()
    if "~" not in text:
        text = "~ " + text
    if text.split("~")[0].strip():
        msg = (
            f"The formula {formula!r} of {owner} has a left-hand side; the topic shares are the "
            "outcome, so give the right-hand side only, e.g. '~ source + outlet'."
        )
        raise InputError(msg)
    return text


def _covariates(prepared, needed, freq, owner, formula) -> pd.DataFrame:
    meta = prepared.meta.reset_index(drop=True)
    data = pd.DataFrame(index=meta.index)
    available = [c for c in meta.columns if c not in ("text", "duplicate_ids")]
    missing = []
    for name in needed:
        if name in available:
            data[name] = meta[name]
        elif name == "period" and "date" in meta.columns:
            date = pd.to_datetime(meta["date"], utc=True)
            data[name] = date.dt.tz_localize(None).dt.to_period(freq).astype(str)
            data.loc[date.isna().to_numpy(), name] = None
        else:
            missing.append(name)
    if missing:
        extra = " ('period' is made from 'date' when present)" if "date" in meta.columns else ""
        msg = (
            f"The formula {formula!r} of {owner} names {', '.join(map(repr, missing))}, which "
            f"the prepared corpus does not have. Available columns: {', '.join(available)}"
            f"{extra}. Fix the formula, or add the column to the corpus before preparing it."
        )
        raise InputError(msg)
    return data


def _check_levels(data: pd.DataFrame, needed, owner: str) -> None:
    for name in needed:
        values = data[name]
        if values.nunique(dropna=True) < 2:
            shown = values.dropna().iloc[0] if values.notna().any() else "missing"
            msg = (
                f"The covariate {name!r} has one value ({shown!r}) in the documents modelled "
                f"({owner}), so its effect cannot be estimated. Drop it from the formula, or "
                "model documents where it varies."
            )
            raise InputError(msg)


def _cluster_codes(prepared, cluster, rows, owner):
    if cluster is None:
        return np.arange(len(rows)), "document"
    if cluster == "group":
        values = pd.Series(np.asarray(prepared.groups, dtype=object))
        if values.isna().all():
            warnings.warn(
                f"The corpus has no group column, so {owner} cannot cluster by reader "
                "(cluster='group'): every document is its own cluster (cluster=None).",
                UserWarning,
                stacklevel=3,
            )
            return np.arange(len(rows)), "document"
    elif cluster in prepared.meta.columns:
        values = prepared.meta[cluster].reset_index(drop=True)
    else:
        columns = ", ".join(map(repr, prepared.meta.columns))
        raise param_error(
            owner, "cluster", cluster, f"None, 'group' or a column of prepared.meta: {columns}"
        )
    codes = pd.factorize(values.to_numpy()[rows], use_na_sentinel=True)[0].astype(np.int64)
    alone = codes < 0  # no cluster value: a cluster of its own
    codes[alone] = codes.max() + 1 + np.arange(int(alone.sum()))
    return codes, str(cluster)


def _values(series: pd.Series) -> list:
    if pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series):
        distinct = np.unique(series.to_numpy(dtype=float))
        if len(distinct) <= FEW_VALUES:
            return distinct.tolist()
        return np.unique(np.quantile(series.to_numpy(dtype=float), QUANTILES)).tolist()
    return sorted(series.dropna().unique().tolist(), key=str)


def _contrasts(spec, data, weights, needed) -> dict[str, pd.DataFrame]:
    """Rows ``a`` with ``a @ beta`` = the average prediction at each covariate value, and
    differences of such rows (effects)."""
    w = weights / weights.sum()

    def average(frame):
        return w @ np.asarray(spec.get_model_matrix(frame), dtype=float)

    pred, eff = [], []
    for name in needed:
        series = data[name]
        numeric = pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series)
        values = _values(series)
        if not numeric and len(values) > MAX_LEVELS:
            continue
        rows = {
            v: average(data.assign(**{name: pd.Series([v] * len(data), dtype=series.dtype)}))
            for v in values
        }
        pred += [{"covariate": name, "value": str(v), "row": r} for v, r in rows.items()]
        if numeric:
            up = average(data.assign(**{name: series + 1})) - average(data)
            eff.append({"covariate": name, "value": "+1", "reference": "observed", "row": up})
        else:
            first = values[0]
            eff += [
                {
                    "covariate": name,
                    "value": str(v),
                    "reference": str(first),
                    "row": r - rows[first],
                }
                for v, r in rows.items()
                if v != first
            ]
    return {"prevalence": pd.DataFrame(pred), "effects": pd.DataFrame(eff)}


def _pool(params: np.ndarray, variances: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pooled estimate and standard error of draws' estimates (M x C) and variances (M x C):
    Rubin's rules, ``W + (1 + 1/M) B``."""
    m = len(params)
    est = params.mean(axis=0)
    within = variances.mean(axis=0)
    between = params.var(axis=0, ddof=1) if m > 1 else np.zeros_like(est)
    return est, np.sqrt(within + (1 + 1 / m) * between)


def _concat(parts, keys) -> pd.DataFrame:
    cols = ["topic", *keys, "estimate", "std_error"]
    if not parts:
        return pd.DataFrame(columns=cols)
    return pd.concat(parts, ignore_index=True)[cols]


def _finish(table: pd.DataFrame, ci: float, settings: dict, *, tests: bool) -> pd.DataFrame:
    z = stats.norm.ppf(0.5 + ci / 2)
    est = table["estimate"].to_numpy(dtype=float)
    se = table["std_error"].to_numpy(dtype=float)
    if tests:
        with np.errstate(divide="ignore", invalid="ignore"):
            table["z"] = est / se
        table["p_value"] = 2 * stats.norm.sf(np.abs(table["z"].to_numpy(dtype=float)))
    table["ci_low"] = est - z * se
    table["ci_high"] = est + z * se
    return table.assign(**{name: settings[name] for name in STATED})
