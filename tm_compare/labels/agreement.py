"""Agreement between coders: Krippendorff's alpha (nominal) and percent agreement.

Pure functions on a *units x coders* table (one row per unit, here a topic; one column per
coder, here an analyst), any hashable values, missing entries as ``None``/``NaN``/``pd.NA``.

Alpha follows Krippendorff (2011), "Computing Krippendorff's Alpha-Reliability", through the
coincidence matrix: only units coded by at least two coders are pairable, and with ``n``
pairable values, ``o_cc`` the coincidences of a value with itself and ``n_c`` the value's
marginal,

    alpha = 1 - D_o / D_e,  D_o = 1 - sum_c o_cc / n,  D_e = 1 - sum_c n_c (n_c - 1) / (n (n - 1)).

Per unit we report ``alpha_u = 1 - D_o(u) / D_e`` with ``D_o(u)`` the share of disagreeing
ordered pairs inside unit ``u`` and ``D_e`` taken from the whole table; weighted by the unit's
number of values these average to the overall alpha (``sum_u m_u alpha_u / n``), so a low
``alpha_u`` points at the units that pull reliability down. Alpha is ``NaN`` when undefined
(fewer than two pairable values, or every pairable value the same, so ``D_e = 0``).

Percent agreement is the share of agreeing coder pairs within a unit; overall, the mean over
pairable units (common practice; it ignores chance agreement, which is why alpha sits beside it).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .._validation import param_error

LEVELS = ("nominal",)


def _counts(table) -> tuple[np.ndarray, pd.DataFrame]:
    """Value counts per unit (units x categories) and the table as a DataFrame."""
    frame = (
        table if isinstance(table, pd.DataFrame) else pd.DataFrame(np.asarray(table, dtype=object))
    )
    if frame.ndim != 2:
        raise param_error("agreement", "table", type(table).__name__, "a 2-D units x coders table")
    values = frame.to_numpy(dtype=object)
    present = ~pd.isna(values)
    codes, categories = pd.factorize(values[present], sort=False)
    unit_pos = np.nonzero(present)[0]
    counts = np.zeros((len(frame), max(len(categories), 1)))
    np.add.at(counts, (unit_pos, codes), 1.0)
    return counts, frame


def _check_level(level: str) -> None:
    if level not in LEVELS:
        raise param_error("krippendorff_alpha", "level", level, "'nominal'")


def _pieces(counts: np.ndarray):
    """Per-unit values m_u, coincidences on the diagonal, and the expected disagreement."""
    m = counts.sum(axis=1)
    pairable = m >= 2
    c = counts[pairable]
    mp = m[pairable]
    n = mp.sum()
    n_c = c.sum(axis=0)
    expected = 1.0 - (n_c * (n_c - 1)).sum() / (n * (n - 1)) if n >= 2 else np.nan
    return m, pairable, n, expected


def _unit_disagreement(counts: np.ndarray, m: np.ndarray) -> np.ndarray:
    # Share of ordered pairs of values inside each unit that differ (NaN below two values).
    with np.errstate(invalid="ignore", divide="ignore"):
        same = (counts * (counts - 1)).sum(axis=1) / (m * (m - 1))
    return np.where(m >= 2, 1.0 - same, np.nan)


def krippendorff_alpha(table, level: str = "nominal") -> float:
    """Krippendorff's alpha of a units x coders table (Krippendorff 2011).

    Parameters
    ----------
    table : DataFrame or 2-D array-like
        One row per unit, one column per coder; missing codes as ``None``/``NaN``.
    level : {"nominal"}
        Level of measurement; only nominal data (labels, verdicts, categories).

    Returns
    -------
    float
        Alpha in [-1, 1], ``NaN`` when undefined (see module docstring).
    """
    _check_level(level)
    counts, _ = _counts(table)
    m, pairable, n, expected = _pieces(counts)
    if not n >= 2 or not expected > 0:
        return float("nan")
    observed = (m[pairable] * _unit_disagreement(counts, m)[pairable]).sum() / n
    return float(1.0 - observed / expected)


def percent_agreement(table) -> float:
    """Mean share of agreeing coder pairs over units coded at least twice (``NaN`` if none)."""
    counts, _ = _counts(table)
    m = counts.sum(axis=1)
    per_unit = 1.0 - _unit_disagreement(counts, m)[m >= 2]
    return float(per_unit.mean()) if per_unit.size else float("nan")


def agreement_by_unit(table, level: str = "nominal") -> pd.DataFrame:
    """Per-unit figures: ``n_coders``, ``percent_agreement`` and ``alpha`` (``alpha_u``).

    Index: the table's units. ``alpha`` uses the expected disagreement of the whole table, so
    the ``n_coders``-weighted mean of the pairable units' ``alpha`` equals
    :func:`krippendorff_alpha` of the table.
    """
    _check_level(level)
    counts, frame = _counts(table)
    m, _, _, expected = _pieces(counts)
    disagreement = _unit_disagreement(counts, m)
    alpha = 1.0 - disagreement / expected if expected > 0 else np.full(len(m), np.nan)
    return pd.DataFrame(
        {"n_coders": m.astype(int), "percent_agreement": 1.0 - disagreement, "alpha": alpha},
        index=frame.index,
    )


def agreement_summary(table, level: str = "nominal") -> dict:
    """Overall figures: ``alpha``, ``percent_agreement``, ``n_coders``, ``n_units``, ``n_values``.

    ``n_units`` counts units coded at least twice (the pairable ones), ``n_coders`` the coders
    with at least one value in them, ``n_values`` their values (Krippendorff's ``n``).
    """
    _check_level(level)
    counts, frame = _counts(table)
    pairable = counts.sum(axis=1) >= 2
    coded = frame.loc[pairable].notna().any(axis=0)
    return {
        "alpha": krippendorff_alpha(frame, level),
        "percent_agreement": percent_agreement(frame),
        "n_coders": int(coded.sum()),
        "n_units": int(pairable.sum()),
        "n_values": int(counts[pairable].sum()),
    }


def agreement_table(table, level: str = "nominal") -> pd.DataFrame:
    """One row per unit, then one overall row.

    Columns: ``scope`` ("unit" or "overall"), ``unit`` (missing on the overall row), ``alpha``,
    ``percent_agreement``, ``n_coders`` (coders with a value), ``n_units`` (pairable units).
    """
    units = agreement_by_unit(table, level)
    per_unit = pd.DataFrame(
        {
            "scope": "unit",
            "unit": units.index,
            "alpha": units["alpha"].to_numpy(),
            "percent_agreement": units["percent_agreement"].to_numpy(),
            "n_coders": units["n_coders"].to_numpy(),
            "n_units": (units["n_coders"] >= 2).astype(int).to_numpy(),
        }
    )
    summary = agreement_summary(table, level)
    overall = {"scope": "overall", "unit": None, **{k: summary[k] for k in per_unit.columns[2:]}}
    return pd.concat([per_unit, pd.DataFrame([overall])], ignore_index=True)


#: What to say when alpha cannot be computed because no topic has two analysts' labels.
NEEDS_TWO_ANALYSTS = "needs labels from 2 analysts on the same topics"
#: Label fields in words, for sentences.
FIELD_WORDS = {"verdict": "verdicts", "category": "categories", "name": "names"}

# Krippendorff (2004), "Content Analysis: An Introduction to Its Methodology", 2nd ed., p. 241
# (from memory): rely on variables with alpha >= .800; consider those with .667 <= alpha < .800
# only for tentative conclusions.
_READINGS = (
    (0.800, "reliable enough to rely on (Krippendorff's threshold: 0.800)"),
    (0.667, "good enough for tentative conclusions only (0.667 to 0.800)"),
    (-np.inf, "too low to rely on (below 0.667)"),
)


def can_compute(row) -> bool:
    """Whether a row of an agreement table (or a summary dict) holds a defined alpha."""
    alpha = row["alpha"]
    return row["n_units"] > 0 and alpha is not None and not pd.isna(alpha)


def explain_agreement(row, what: str | None = None) -> str:
    """One plain sentence about a row of an agreement table or a summary dict.

    ``what`` names what was labelled (default: from the row's ``field``, e.g. "verdicts").

    With no topic labelled by two analysts: ``"... needs labels from 2 analysts on the same
    topics"``; with every pairable value the same (alpha undefined: no variation to measure
    against chance): says so and gives the percent agreement; otherwise alpha, what it rests
    on, and how Krippendorff (2004) reads it.
    """
    if what is None:
        field = row.get("field", "labels")
        what = FIELD_WORDS.get(field, field)
    units, coders = int(row["n_units"]), int(row["n_coders"])
    if units == 0:
        return f"Agreement on {what} {NEEDS_TWO_ANALYSTS}."
    on = f"{units} topic{'s' if units != 1 else ''} labelled by {coders} analysts"
    if not can_compute(row):
        return (
            f"Agreement on {what} cannot be computed yet: on the {on} every label is the same, "
            "so there is no variation to weigh against chance (alpha needs two different "
            "values). The analysts agree on all of them."
        )
    alpha = float(row["alpha"])
    reading = next(text for limit, text in _READINGS if alpha >= limit)
    share = float(row["percent_agreement"])
    return (
        f"Krippendorff's alpha for {what} is {alpha:.2f} on {on} "
        f"({share:.0%} of pairs agree): {reading}."
    )
