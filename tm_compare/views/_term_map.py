"""The term map (:func:`term_map`, re-exported by :mod:`.charts`) and the placement of its names."""

from __future__ import annotations

import pandas as pd

from ._chart_style import (
    FAINT,
    FOCUS,
    INK,
    PADDING,
    TOPIC_PICK,
    _alt,
    _focus_param,
    wrap,
)


def term_map(
    terms: pd.DataFrame,
    *,
    focus: int | None = None,
    ranking: str = "frequent",
    context: pd.DataFrame | None = None,
    n_labels: int = 10,
    width: int = 360,
    height: int = 280,
):
    """Where the topic's leading terms sit: how much of the term's use falls in the topic
    (p(topic | term), across) against how much of the topic the term is (p(term | topic), up, log
    scale); the ranked terms are numbered and named, the topic's other frequent terms are faint.

    Holds every topic's terms; the parameter ``focus`` picks the topic drawn (changed in place).

    Parameters
    ----------
    terms : DataFrame
        The ranked terms of every topic: ``topic``, ``term``, ``rank`` (1 = first),
        ``probability`` (p(term | topic)) and ``share_of_term`` (p(topic | term)).
    ranking : str
        The ranking's name, for the title.
    context : DataFrame, optional
        More terms per topic (same columns) drawn as faint dots behind the ranked ones.
    n_labels : int
        Ranked terms named on the map (the first ``n_labels``).
    """
    alt = _alt()
    cols = ["topic", "term", "rank", "probability", "share_of_term"]
    ranked = terms[cols].assign(kind="ranked")
    layers_data = [ranked]
    if context is not None:
        ranked_keys = set(zip(ranked["topic"], ranked["term"], strict=True))
        extra = context[cols][
            [
                (t, w) not in ranked_keys
                for t, w in zip(context["topic"], context["term"], strict=True)
            ]
        ]
        layers_data.append(extra.assign(kind="context", rank=0))
    data = pd.concat(layers_data, ignore_index=True)
    data = data.sort_values("topic", kind="stable", ignore_index=True)
    # Names are placed topic by topic on plain arrays; the frame gets its four columns once.
    placed = {"label": [""] * len(data), "dx": [6] * len(data), "dy": [0] * len(data)}
    placed["align"] = ["left"] * len(data)
    columns = {c: data[c].to_numpy() for c in ("probability", "share_of_term", "rank", "term")}
    ranked_rows = data["kind"].to_numpy() == "ranked"
    for rows in data.groupby("topic", sort=False).indices.values():
        names = _place_names(
            *(columns[c][rows] for c in columns), ranked_rows[rows], width, height, n_labels
        )
        for column, values in zip(placed, names, strict=True):
            for row, value in zip(rows, values, strict=True):
                placed[column][row] = value
    data = data.assign(**placed)
    pick = alt.selection_point(name=TOPIC_PICK, fields=["topic"], on="click")
    x = alt.X(
        "share_of_term:Q",
        title=wrap("share of the term's use that falls in this topic (p(topic | term))", width),
        scale=alt.Scale(domain=[0, 1]),
        axis=alt.Axis(format=".0%", tickCount=5),
    )
    y = alt.Y(
        "probability:Q",
        title=wrap("share of the topic (p(term | topic), log scale)", height),
        scale=alt.Scale(type="log", nice=False, padding=MAP_PAD),
        axis=alt.Axis(tickCount=4, format=".1~%", labelOverlap="greedy"),
    )
    tip = [
        alt.Tooltip("term:N"),
        alt.Tooltip("rank:Q"),  # "rank: 1" in each dot's aria-label (bench/view_browser_speed.py)
        alt.Tooltip("probability:Q", title="p(term | topic)", format=".4f"),
        alt.Tooltip("share_of_term:Q", title="p(topic | term)", format=".2f"),
        alt.Tooltip("topic:Q"),
    ]
    base = alt.Chart(data).transform_filter(f"datum.topic == {FOCUS}")
    faint = base.transform_filter("datum.kind == 'context'").mark_circle(size=22, color=FAINT)
    dots = (
        base.transform_filter("datum.kind == 'ranked'")
        .mark_circle(size=48, color=INK, opacity=0.9, cursor="pointer")
        .encode(x=x, y=y, tooltip=tip)
    )
    # Names are placed in Python, where no two overlap (see _place_names); a name with no free
    # place around its dot keeps only its rank.
    names = (
        base.transform_filter("datum.kind == 'ranked' && datum.label != ''")
        .mark_text(
            align=alt.expr("datum.align"),
            dx=alt.expr("datum.dx"),
            dy=alt.expr("datum.dy"),
            baseline="middle",
            fontSize=11,
            color=INK,
        )
        .encode(x=x, y=y, text="label:N")
    )
    return (
        alt.layer(faint.encode(x=x, y=y), dots, names)
        .add_params(pick, _focus_param(focus))
        .properties(
            width=width,
            height=height,
            padding=PADDING,
            title=alt.Title(
                wrap(f"Terms of the topic, ranked {ranking}", width),
                subtitle=wrap(
                    "Up: more of the topic; right: more of the term's use is in this topic.",
                    width,
                ),
                anchor="start",
            ),
        )
    )


MAP_PAD = 10  # pixels of padding of the term map's log axis
_LABEL_H = 14  # pixels of one line of 11 px text, as browsers box it
_NAME_CHAR_PX = 7.0  # a wide estimate of one character of a name (fonts vary by machine)
# Where a name may go around its dot: (dx, dy, align), tried in this order.
_PLACES = (
    (6, 0, "left"),
    (-6, 0, "right"),
    (6, -10, "left"),
    (6, 10, "left"),
    (-6, -10, "right"),
    (-6, 10, "right"),
    (0, -14, "center"),
    (0, 14, "center"),
)


def _place_names(
    probability, share_of_term, ranks, terms, ranked_rows, width: int, height: int, n_labels: int
) -> tuple[list, list, list, list]:
    """One topic's names on the term map: ``label``, ``dx``, ``dy`` and ``align`` per row. Each
    ranked term (``ranked_rows``, in rank order) takes the first place around its dot where its
    name overlaps no other name or dot and stays inside the chart; with none free it shows only
    its rank.

    Pixels are computed as the chart draws them: ``share_of_term`` on [0, 1] across ``width``;
    ``probability`` on a log scale over the topic's values, ``MAP_PAD`` pixels in from each end.
    """
    import numpy as np

    n = len(probability)
    logs = np.log(np.clip(np.asarray(probability, dtype=float), 1e-12, None))
    lo, hi = logs.min(), logs.max()
    span = hi - lo if hi > lo else 1.0
    px = np.asarray(share_of_term, dtype=float) * width
    py = MAP_PAD + (hi - logs) / span * (height - 2 * MAP_PAD)
    dots = np.column_stack([px - 4, py - 4, px + 4, py + 4])
    taken: list[tuple] = []
    labels, dxs, dys, aligns = [""] * n, [6] * n, [0] * n, ["left"] * n
    ranked = np.flatnonzero(ranked_rows)

    def free(box, others) -> bool:
        x0, y0, x1, y1 = box
        if x0 < 0 or x1 > width or y0 < 0 or y1 > height:
            return False
        if any(x1 > a and c > x0 and y1 > b and d > y0 for a, b, c, d in taken):
            return False
        hit = (x1 > others[:, 0]) & (others[:, 2] > x0) & (y1 > others[:, 1]) & (others[:, 3] > y0)
        return not hit.any()

    # Every topic of the map is placed when a view opens: boxes are plain tuples and each
    # term's other dots are cut out once, not per place tried.
    for i in ranked[np.argsort(ranks[ranked], kind="stable")]:
        rank = int(ranks[i])
        others = np.delete(dots, i, axis=0)
        texts = [f"{rank} {terms[i]}"] if rank <= n_labels else []
        texts.append(str(rank))
        for text in texts:
            w = _NAME_CHAR_PX * len(text) + 2
            for dx, dy, align in _PLACES:
                left = px[i] + dx - (w if align == "right" else w / 2 if align == "center" else 0)
                box = (left, py[i] + dy - _LABEL_H / 2, left + w, py[i] + dy + _LABEL_H / 2)
                if free(box, others):
                    taken.append(box)
                    labels[i], dxs[i], dys[i], aligns[i] = text, dx, dy, align
                    break
            if labels[i]:
                break
    return labels, dxs, dys, aligns
