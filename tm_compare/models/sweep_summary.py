"""A sweep in words for a terminal: the scores, fits that did not converge, junk topics per k,
and the proposed k with the numbers behind it (the CLI and the demo print this)."""

from __future__ import annotations

import pandas as pd

from ..options import default
from .quality import describe
from .scores import MEASURES

SHOWN = [
    "k",
    "seed",
    *MEASURES,
    "perplexity",
    "stability",
    "diversity",
    "near_empty",
    "rarely_dominant",
    "near_duplicate",
    "passes",
    "converged",
    "fit_seconds",
]


def junk_columns(scores: pd.DataFrame) -> list[str]:
    """The junk counts a score table holds (sweeps saved before rarely dominant topics were
    counted lack that column)."""
    return [c for c in ("near_empty", "rarely_dominant", "near_duplicate") if c in scores]


def unconverged(scores: pd.DataFrame) -> pd.DataFrame:
    """Rows of fits known not to have converged (fits of older versions are unknown)."""
    if "converged" not in scores:
        return scores.iloc[:0]
    return scores[scores["converged"].astype("boolean").eq(False).fillna(False)]


def converged_text(value) -> str:
    return "unknown" if value is None or value is pd.NA else ("yes" if value else "NO")


def health(scores: pd.DataFrame, cap=None) -> list[str]:
    """Lines on convergence and junk topics of a sweep's fits."""
    lines = []
    stuck = unconverged(scores)
    if len(stuck):
        fits = ", ".join(
            f"k = {a} seed {b}" for a, b in zip(stuck["k"], stuck["seed"], strict=True)
        )
        after = f" after {cap} passes" if cap else ""
        lines.append(
            f"NOT CONVERGED: {len(stuck)} of {len(scores)} fits still moved{after} ({fits}); "
            "read them with care, or sweep again with more passes."
        )
    elif "converged" in scores and scores["converged"].notna().all():
        lines.append(f"All {len(scores)} fits converged.")
    if {"near_empty", "near_duplicate"} <= set(scores.columns):
        per_k = scores.groupby("k")[junk_columns(scores)].sum()
        lines.append(
            "Junk topics, summed over seeds: "
            + "; ".join(describe(int(k), **r.astype(int).to_dict()) for k, r in per_k.iterrows())
        )
    return lines


def summary(result, measure: str = default("measure")) -> str:
    """The scores table, fits that did not converge, junk topics per k and the proposal."""
    scores = result.scores_
    table = scores[[c for c in SHOWN if c in scores.columns]].copy()
    if "converged" in table:
        table["converged"] = table["converged"].map(converged_text)
    rec = result.recommend(measure=measure)
    return "\n".join(
        [
            f"Scores of {len(scores)} fits ({', '.join(sorted(scores['engine'].unique()))}), "
            "one row per fit:",
            table.to_string(index=False, float_format=lambda x: f"{x:.4g}"),
            "",
            *health(scores, result.settings_.get("passes")),
            "",
            f"Proposed: {rec.rule}",
            "How the rule went:",
            *(f"  {line}" for line in rec.details),
        ]
    )
