"""The choice of k: :func:`recommend` applies a stated four-step rule to a sweep's scores.

Steps (each keeps the k that pass it): junk topics (:mod:`tm_compare.models.quality`),
stability across seeds (Greene, O'Callaghan & Cunningham 2014), coherence (NPMI by default),
held-out fit. The answer is one sentence naming the runner-up and why it lost; every number
behind it is in :attr:`Recommendation.details` and :attr:`Recommendation.table`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .._validation import param_error
from ..errors import InputError
from ..options import default
from .scores import MEASURE_NAMES, MEASURES

_LOWER_IS_BETTER = {"perplexity"}
MIN_SEEDS = 3  # stability needs three fits per k: two give one pair of runs and no spread
_JUNK = ("near_empty", "near_duplicate")  # needed to judge junk; "rarely_dominant" when present


@dataclass
class Recommendation:
    """A proposed number of topics, the rule that chose it, and the runner-up.

    Attributes
    ----------
    k, seed
        The proposed topic count and the seed of the fit to read at that k: a converged fit
        without junk topics, then the one best on the rule's last step (held-out fit).
    rule : str
        One sentence: the k, what made it win, and the runner-up with why it lost.
    table : DataFrame
        Per-k numbers the rule was applied to (means and standard errors over seeds, junk
        topics per fit, share of fits converged, which k passed each step).
    runner_up : int or None
        The k that came closest (None when the sweep has one k).
    why_not_runner_up : str
        Why the runner-up lost, with its numbers.
    details : list of str
        The steps of the rule with every number behind them, then any notes.
    """

    k: int
    seed: object
    rule: str
    table: pd.DataFrame = field(repr=False)
    runner_up: int | None = None
    why_not_runner_up: str = ""
    details: list = field(default_factory=list, repr=False)

    def __str__(self) -> str:
        return self.rule


def recommend(
    scores: pd.DataFrame, measure=default("measure"), stability="stability", n_se=1.0
) -> Recommendation:
    """Propose k by a rule in four steps, each keeping the k that pass it:

    1. **junk topics** (:mod:`tm_compare.models.quality`): keep k where most fits have no
       near-empty topic and no near-duplicate pair (if none, the k with fewest per fit);
    2. **stability across seeds** (Greene, O'Callaghan & Cunningham 2014): keep k whose mean
       stability is within ``n_se`` standard errors of the most stable kept k (a
       one-standard-error rule, common practice in model selection). Needs at least three
       seeds per k; with fewer, the rule says stability cannot be judged and skips the step;
    3. **coherence** (``measure``, NPMI by default): keep k whose mean is within ``n_se``
       standard errors of the best kept k;
    4. **held-out fit**: of those, the k with the lowest mean held-out perplexity (without
       perplexities, the best mean ``measure``).

    The runner-up is the k that got furthest (then best on the step it failed); the rule
    names it and why it lost. A step whose columns are missing or not finite is skipped and
    the details say so.

    Parameters
    ----------
    scores : DataFrame
        One row per fit with columns ``k``, ``seed`` and some of ``measure``, ``stability``,
        ``perplexity``, ``near_empty``, ``near_duplicate``, ``converged`` (e.g.
        ``Sweep.scores_``).
    measure : str
        Coherence column ("npmi", "c_v", "uci", "umass", or another score where higher is
        better; "perplexity" is lower-better).
    stability : str
        Column of per-fit stability.
    n_se : float
        How many standard errors below the best still qualify in steps 2 and 3.
    """
    owner = "recommend"
    if not isinstance(scores, pd.DataFrame) or not {"k", "seed"} <= set(scores.columns):
        got = list(scores.columns) if isinstance(scores, pd.DataFrame) else type(scores).__name__
        raise param_error(
            owner, "scores", got, "a DataFrame with one row per fit and columns 'k' and 'seed'"
        )
    if not isinstance(n_se, int | float) or isinstance(n_se, bool) or n_se < 0:
        raise param_error(owner, "n_se", n_se, "a number >= 0")
    known = (*MEASURES, "perplexity", "stability", "diversity")
    for name, value in (("measure", measure), ("stability", stability)):
        # A known score missing from this table is skipped with a note (below); any other name
        # is a mistake, never a silent fall-back to the other steps.
        if value not in known and (value not in scores.columns or value in ("k", "seed")):
            usable = [c for c in known if c in scores.columns]
            raise param_error(
                owner,
                name,
                value,
                "a score column: " + ", ".join(repr(c) for c in usable or known),
                "Pass one of those, or score the fits with it first.",
            )
    label = MEASURE_NAMES.get(measure, measure)
    lower = measure in _LOWER_IS_BETTER
    frame = scores.copy()
    notes = []
    for col, name in ((measure, label), (stability, "stability"), ("perplexity", "perplexity")):
        if col not in frame.columns:
            frame[col] = np.nan
            continue
        values = pd.to_numeric(frame[col], errors="coerce").astype(float)
        bad = int((~np.isfinite(values)).sum())
        frame[col] = values.where(np.isfinite(values))
        if bad and bad < len(frame):
            notes.append(f"{bad} of {len(frame)} fits without a finite {name} were left out")
    if frame[[measure, stability]].isna().all().all():
        msg = (
            f"recommend needs finite values in the {measure!r} or {stability!r} column of scores; "
            f"both are missing or empty. Score the fits first (columns present: {list(scores.columns)})."
        )
        raise InputError(msg)
    has_junk = all(c in frame.columns for c in _JUNK)
    if has_junk:
        if "rarely_dominant" not in frame.columns:  # sweeps saved before it was counted
            frame["rarely_dominant"] = 0
        frame["junk"] = sum(frame[c].fillna(0).astype(float) for c in (*_JUNK, "rarely_dominant"))
        frame["clean"] = frame["junk"] == 0
    grouped = frame.groupby("k")
    table = pd.DataFrame({"fits": grouped.size()})
    for col in (measure, stability, "perplexity"):
        table[f"{col}_mean"] = grouped[col].mean()
        table[f"{col}_se"] = grouped[col].std(ddof=1) / np.sqrt(grouped[col].count())
    for col in (*MEASURES, "diversity"):
        if col in frame.columns and col != measure:
            table[f"{col}_mean"] = grouped[col].mean()
    if has_junk:
        table["near_empty_mean"] = grouped["near_empty"].mean()
        table["rarely_dominant_mean"] = grouped["rarely_dominant"].mean()
        table["near_duplicate_mean"] = grouped["near_duplicate"].mean()
        table["junk_mean"] = grouped["junk"].mean()
        table["clean_share"] = grouped["clean"].mean()
    if "converged" in frame.columns:
        table["converged_share"] = grouped["converged"].apply(
            lambda c: c.astype("boolean").astype(float).mean()
        )
    table = table.reset_index()
    details, keep = [], pd.Series(True, index=table.index)
    table["step"] = 0  # the last step each k passed

    # 1. junk topics
    if has_junk:
        clean = table["clean_share"] > 0.5
        if not clean.any():
            clean = table["junk_mean"] == table["junk_mean"].min()
            details.append(
                "1. Junk topics: every k has junk topics in most fits; kept the fewest per fit: "
                + _listed(table, clean)
            )
        else:
            details.append(
                "1. Junk topics (near-empty topics, rarely dominant topics, near-duplicate "
                "pairs per fit): "
                + "; ".join(
                    f"k = {int(r.k)}: {_num(r.near_empty_mean)}, {_num(r.rarely_dominant_mean)}, "
                    f"{_num(r.near_duplicate_mean)}"
                    for r in table.itertuples()
                )
                + " -> kept "
                + _listed(table, clean)
            )
        keep &= clean
        table.loc[keep, "step"] = 1
    else:
        details.append("1. Junk topics: not counted (no near_empty/near_duplicate columns)")
        table["step"] = 1
    # 2. stability
    seeds_ok = table["fits"].min() >= MIN_SEEDS
    judged = seeds_ok and table.loc[keep, "stability_mean"].notna().any()
    if judged:
        top = _best_row(table[keep], "stability_mean", lower=False)
        se = 0.0 if not np.isfinite(top["stability_se"]) else top["stability_se"]
        passed = keep & (table["stability_mean"] >= top["stability_mean"] - n_se * se)
        details.append(
            "2. Stability across seeds (mean, s.e.): "
            + "; ".join(
                f"k = {int(r.k)}: {_num(r.stability_mean)}, {_num(r.stability_se)}"
                for r in table[keep].itertuples()
            )
            + f" -> best {_num(top['stability_mean'])} at k = {int(top['k'])}; kept "
            + _listed(table, passed)
        )
        keep = passed
    else:
        why = (
            f"needs {MIN_SEEDS} or more seeds per k (this sweep has {int(table['fits'].min())})"
            if not seeds_ok
            else "no fit has a finite stability"
        )
        details.append(f"2. Stability across seeds cannot be judged: it {why}; step skipped")
    table.loc[keep, "step"] = 2
    # 3. coherence
    has_measure = table.loc[keep, f"{measure}_mean"].notna().any()
    if has_measure:
        best = _best_row(table[keep], f"{measure}_mean", lower)
        se = best[f"{measure}_se"] if np.isfinite(best[f"{measure}_se"]) else 0.0
        gap = n_se * se
        near = (
            table[f"{measure}_mean"] <= best[f"{measure}_mean"] + gap
            if lower
            else table[f"{measure}_mean"] >= best[f"{measure}_mean"] - gap
        )
        passed = keep & near
        details.append(
            f"3. {label} (mean, s.e.): "
            + "; ".join(
                f"k = {int(r[0])}: {_num(r[1])}, {_num(r[2])}"
                for r in table.loc[keep, ["k", f"{measure}_mean", f"{measure}_se"]].itertuples(
                    index=False
                )
            )
            + f" -> best {_num(best[f'{measure}_mean'])} at k = {int(best['k'])}; kept "
            + _listed(table, passed)
        )
        keep = passed
    else:
        details.append(f"3. {label}: no kept k has a finite value; step skipped")
    table.loc[keep, "step"] = 3
    table["candidate"] = keep
    # 4. held-out fit
    pool = table[keep]
    if pool["perplexity_mean"].notna().any():
        final, final_lower, final_name = "perplexity_mean", True, "held-out perplexity"
    else:
        final, final_lower, final_name = f"{measure}_mean", lower, f"mean {label}"
        notes.append("no held-out perplexity, so the best mean " + label + " decided")
    if pool[final].notna().any():
        chosen = _best_row(pool, final, final_lower)
    else:
        chosen = _best_row(pool, "stability_mean", False)
    details.append(
        f"4. {final_name[0].upper()}{final_name[1:]}: "
        + "; ".join(
            f"k = {int(r[0])}: {_num(r[1])}" for r in pool[["k", final]].itertuples(index=False)
        )
        + f" -> k = {int(chosen['k'])}"
    )
    table.loc[table["k"] == chosen["k"], "step"] = 4
    table["chosen"] = table["k"] == chosen["k"]
    k = int(chosen["k"])

    # The seed to read: a converged fit without junk topics, then the best on the last step.
    at_k = frame[frame["k"] == k]
    column = "perplexity" if final == "perplexity_mean" else measure
    order = pd.DataFrame(
        {
            "stuck": ~at_k["converged"].astype("boolean").fillna(True).astype(bool)
            if "converged" in at_k
            else False,
            "junk": at_k["junk"] if has_junk else 0.0,
            "value": (at_k[column] if final_lower else -at_k[column]).fillna(np.inf),
        },
        index=at_k.index,
    )
    seed = scores.at[order.sort_values(["stuck", "junk", "value"], kind="stable").index[0], "seed"]

    runner, why = _runner_up(table, chosen, measure, label, lower, final, final_lower)
    table["runner_up"] = table["k"] == runner if runner is not None else False
    if "converged" in frame.columns:
        unconverged = frame[frame["converged"].astype("boolean").eq(False).fillna(False)]
        if len(unconverged):
            notes.append(
                f"{len(unconverged)} of {len(frame)} fits did not converge: "
                + ", ".join(
                    f"k = {a} seed {b}"
                    for a, b in zip(unconverged["k"], unconverged["seed"], strict=True)
                )
            )
    spread = "one standard error" if n_se == 1 else f"{n_se:g} standard errors"
    within = [x for x, on in (("stability", judged), (label, has_measure)) if on]
    kept_by = ["no junk topics in most fits"] if has_junk else []
    if within:
        kept_by.append(f"{' and '.join(within)} within {spread} of the best")
    among = f"among k with {', '.join(kept_by)}" if kept_by else "among all k"
    best_at = "lowest held-out perplexity" if final == "perplexity_mean" else f"best mean {label}"
    rule = f"k = {k}: {best_at} {among}"
    if runner is not None:
        rule += f"; runner-up k = {runner} {why}"
    if not seeds_ok:
        rule += f" (stability across seeds cannot be judged with fewer than {MIN_SEEDS} seeds)"
    elif not judged:
        rule += " (without stability: no fit has a finite value)"
    details.extend(f"Note: {n}" for n in notes)
    return Recommendation(
        k=k,
        seed=seed,
        rule=rule,
        table=table,
        runner_up=runner,
        why_not_runner_up=why,
        details=details,
    )


def _listed(table, mask) -> str:
    ks = table.loc[mask, "k"].astype(int).tolist()
    return ", ".join(map(str, ks)) if ks else "none"


def _runner_up(table, chosen, measure, label, lower, final, final_lower):
    """The k that got furthest after the chosen one, and why it lost (in words)."""
    rest = table[table["k"] != chosen["k"]]
    if rest.empty:
        return None, ""
    step = rest["step"].max()
    tied = rest[rest["step"] == step]
    if step >= 3:  # lost on held-out fit
        r = _best_row(tied, final, final_lower) if tied[final].notna().any() else tied.iloc[0]
        what = "held-out perplexity" if final == "perplexity_mean" else f"mean {label}"
        return int(r["k"]), (
            f"has {'higher' if final_lower else 'lower'} {what} "
            f"({_num(r[final])} vs {_num(chosen[final])})"
        )
    if step == 2:  # lost on coherence
        r = _best_row(tied, f"{measure}_mean", lower)
        return int(r["k"]), (
            f"has {'higher' if lower else 'lower'} mean {label} ({_num(r[f'{measure}_mean'])} vs "
            f"{_num(chosen[f'{measure}_mean'])}, beyond one standard error)"
        )
    if step == 1:  # lost on stability
        r = _best_row(tied, "stability_mean", lower=False)
        return int(r["k"]), (
            f"is less stable across seeds ({_num(r['stability_mean'])} vs "
            f"{_num(chosen['stability_mean'])})"
        )
    r = tied.loc[tied["junk_mean"].sort_values(kind="stable").index[0]]
    return int(r["k"]), (
        f"has junk topics ({_num(r['near_empty_mean'])} near-empty, "
        f"{_num(r['rarely_dominant_mean'])} rarely dominant, "
        f"{_num(r['near_duplicate_mean'])} near-duplicate pairs per fit)"
    )


def _best_row(table, column, lower):
    """Row with the best value of ``column``; ties go to the smaller k."""
    ordered = table.dropna(subset=[column]).sort_values(
        [column, "k"], ascending=[lower, True], kind="stable"
    )
    return ordered.iloc[0]


def _num(x) -> str:
    return f"{x:,.0f}" if abs(x) >= 100 else f"{x:.3g}"
