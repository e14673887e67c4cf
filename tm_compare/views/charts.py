"""Charts of a sweep and of one model: tidy DataFrame in, Altair chart out, nothing displayed.

Every chart takes small, already aggregated tables (one row per fit, per topic and source, or per
term), never one row per document. Clicks reach Python through named selections:

- ``fit_pick`` (fields ``k``, ``seed``) on :func:`sweep_chart`, whose fit on show is the variable
  parameter ``picked`` (``"k:seed"``);
- ``topic_pick`` (field ``topic``) on :func:`source_chart` and :func:`terms_chart`.

The topic on show is a variable parameter named ``focus``: a widget changes it without rebuilding
the chart (``chart_widget.params.focus = 3``); a chart built for a view carries the view's topic as
the parameter's first value, so it is right from the first draw.

Colour means one thing: which source. Everything else is drawn in ink: whether a difference
holds up is the mark's fill (filled: holds up; hollow: could be chance, words from
:data:`tm_compare.options.VERDICT_WORDS`), the topic in focus a pale band behind its row.

Altair is imported when the first chart is built, so importing the views stays fast.
"""

from __future__ import annotations

import textwrap
import warnings

import pandas as pd

from ..options import VERDICT_WORDS, verdict_word

#: Our palette: a deep teal and a brick red for two sources, then further sources.
PALETTE = ["#1b6f80", "#b5523b", "#6b8e23", "#8a5fa8", "#c28f1c", "#4f5d75"]
INK = "#2b2d31"
FAINT = "#c9ccd1"
ACCENT = "#e0a526"
BAND = "#f6e7c1"  # the pale band behind the topic in focus
#: Warnings and errors: a dark ochre, never a source's colour.
WARN = "#7a5c12"
WARN_BG = "#fbf4e2"
#: Average width of one character of chart text in pixels (11 px sans-serif), to wrap titles.
CHAR_PX = 6.4
#: Room around every chart: text drawn with another font than the one it was measured with (an
#: SVG exported by vl-convert, shown by a browser) may be a few per cent wider.
PADDING = {"left": 24, "right": 16, "top": 6, "bottom": 6}
#: Longest topic caption on an axis, in characters; longer ones end in "..." (whole on hover).
CAPTION_CHARS = 34


def _alt():
    import altair

    return altair


FIT_PICK = "fit_pick"
TOPIC_PICK = "topic_pick"
FOCUS = "focus"
PICKED = "picked"


def fit_key(k: int, seed: int) -> str:
    """The ``"k:seed"`` key of one fit, as the ``picked`` parameter of :func:`sweep_chart` holds it."""
    return f"{int(k)}:{int(seed)}"


def _focus_param(focus: int | None):
    return _alt().param(name=FOCUS, value=-1 if focus is None else int(focus))


def _source_scale(sources: list[str]):
    return _alt().Scale(domain=list(sources), range=PALETTE[: max(1, len(sources))])


def wrap(text: str, pixels: float) -> list[str]:
    """``text`` cut into lines no wider than ``pixels`` at 11 px (for titles and subtitles)."""
    return textwrap.wrap(text, max(20, int(pixels / CHAR_PX))) if text else []


def short(caption: str, chars: int = CAPTION_CHARS) -> str:
    """A caption cut to ``chars`` characters, ending in an ellipsis when cut."""
    caption = str(caption)
    return caption if len(caption) <= chars else caption[: chars - 1].rstrip() + "\u2026"


def sweep_chart(
    scores: pd.DataFrame,
    *,
    title: str,
    recommended_k: int | None = None,
    rule: str | None = None,
    picked: tuple[int, int] | None = None,
    width: int = 440,
    height: int = 240,
):
    """Score against k: one dot per seed, the mean over seeds as a line, the seed range as a band.

    Parameters
    ----------
    scores : DataFrame
        One row per fit with columns ``k``, ``seed`` and ``value`` (the chosen measure).
    title : str
        Name of the measure, shown on the y axis.
    recommended_k, rule : optional
        The recommended k, marked with a vertical rule and the rule in words as the subtitle.
    picked : (k, seed), optional
        The fit on show, drawn in the accent colour; a variable parameter named ``picked``
        (``"k:seed"``) so a widget can move it in place.
    """
    alt = _alt()
    data = scores[["k", "seed", "value"]].dropna(subset=["value"]).copy()
    data["k"] = data["k"].astype(int)
    data["seed"] = data["seed"].astype(int)
    pick = alt.selection_point(name=FIT_PICK, fields=["k", "seed"], on="click")
    x = alt.X(
        "k:Q",
        title="number of topics (k)",
        scale=alt.Scale(zero=False),
        # Ticks at the k values fitted: an automatic integer axis repeats labels on short grids.
        axis=alt.Axis(values=_thin(sorted(data["k"].unique().tolist()), width), format="d"),
    )
    base = alt.Chart(data)
    band = base.mark_area(opacity=0.18, color=PALETTE[0]).encode(
        x=x, y=alt.Y("min(value):Q", title=title, scale=alt.Scale(zero=False)), y2="max(value):Q"
    )
    line = base.mark_line(color=PALETTE[0], strokeWidth=2).encode(x=x, y="mean(value):Q")
    picked_param = alt.param(name=PICKED, value=fit_key(*picked) if picked else "")
    is_picked = f"datum.k + ':' + datum.seed == {PICKED}"
    dots = (
        base.mark_point(filled=True, cursor="pointer")
        .encode(
            x=x,
            y="value:Q",
            # The fit on show: a large ink dot; the others smaller and paler (no source colour).
            color=alt.condition(is_picked, alt.value(INK), alt.value("#6b7078")),
            opacity=alt.condition(is_picked, alt.value(1.0), alt.value(0.5)),
            size=alt.condition(is_picked, alt.value(140), alt.value(60)),
            tooltip=[
                alt.Tooltip("k:Q"),
                alt.Tooltip("seed:Q"),
                alt.Tooltip("value:Q", title=title, format=".4f"),
            ],
        )
        .add_params(pick, picked_param)
    )
    layers = [band, line, dots]
    if recommended_k is not None:
        mark = pd.DataFrame(
            {"k": [int(recommended_k)], "note": [f"suggested k = {int(recommended_k)}"]}
        )
        layers.append(
            alt.Chart(mark)
            .mark_rule(color=ACCENT, strokeWidth=2, strokeDash=[5, 3])
            .encode(x="k:Q")
        )
        layers.append(
            alt.Chart(mark)
            .mark_text(align="left", dx=5, dy=-4, color=INK, fontWeight="bold")
            .encode(x="k:Q", y=alt.value(8), text="note:N")
        )
    return alt.layer(*layers).properties(
        width=width,
        height=height,
        padding=PADDING,
        title=alt.Title(
            wrap(f"{title} against k (dots: seeds; band: range over seeds)", width),
            subtitle=wrap(rule or "", width),
            anchor="start",
            fontSize=13,
        ),
    )


def _thin(values: list, width: int, min_px: int = 28) -> list:
    """At most one tick every ``min_px`` pixels: every n-th value, always the first and last."""
    room = max(2, int(width / min_px))
    if len(values) <= room:
        return values
    step = -(-len(values) // room)  # ceiling division
    kept = values[::step]
    if kept[-1] != values[-1]:
        kept[-1] = values[-1]
    return kept


def source_chart(
    prevalence: pd.DataFrame,
    difference: pd.DataFrame,
    *,
    focus: int | None = None,
    contrast: str = "difference",
    note: str = "",
    row_height: int = 18,
    width: int = 720,
):
    """Each topic's prevalence per source, and the difference between sources, topics in one order.

    Parameters
    ----------
    prevalence : DataFrame
        Columns ``topic`` (int), ``name`` (topic caption), ``source``, ``estimate``, ``lower``,
        ``upper``: one row per topic and source.
    difference : DataFrame
        Columns ``topic``, ``name``, ``estimate``, ``lower``, ``upper``, ``clear`` (bool: the
        difference holds up, i.e. its adjusted p-value is at most the false discovery rate); its
        row order is the order of the topics on both panels.
    focus : int, optional
        The topic with a band behind its row in both panels (a variable parameter, ``focus``).
    contrast : str
        Axis title of the right-hand panel (which sources are compared).
    note : str
        How the numbers were made, wrapped under the title.
    width : int
        Pixels for the whole chart: labels, both panels and the gap between them.
    """
    alt = _alt()
    order = difference["name"].tolist()
    sources = sorted(prevalence["source"].unique().tolist())
    height = max(120, row_height * len(order))
    labels = {name: short(name) for name in order}
    label_px = min(230, int(CHAR_PX * max((len(v) for v in labels.values()), default=8)) + 12)
    left_w = max(160, int((width - label_px - 16) * 0.56))
    right_w = max(140, width - label_px - 16 - left_w)
    pick = alt.selection_point(name=TOPIC_PICK, fields=["topic"], on="click")
    short_expr = " : ".join(
        f"datum.value === {_js(name)} ? {_js(text)}"
        for name, text in labels.items()
        if name != text
    )
    # Long captions are shortened on the axis only (whole in the tooltip and the data).
    shortened = {"labelExpr": f"{short_expr} : datum.value"} if short_expr else {}
    axis = alt.Axis(labelLimit=label_px, **shortened)
    y = alt.Y("name:N", sort=order, title=None, axis=axis)
    y_bare = alt.Y("name:N", sort=order, axis=None)
    offset = alt.YOffset("source:N", scale=alt.Scale(domain=sources))
    colour = alt.Color(
        "source:N", scale=_source_scale(sources), legend=alt.Legend(orient="top", title=None)
    )
    tip = [
        alt.Tooltip("name:N", title="topic"),
        alt.Tooltip("source:N"),
        alt.Tooltip("estimate:Q", format=".3f"),
        alt.Tooltip("lower:Q", format=".3f"),
        alt.Tooltip("upper:Q", format=".3f"),
    ]
    bands = difference[["topic", "name"]].assign(
        band="selected topic " + difference["name"].astype(str)
    )

    def band(y_channel, panel_width):
        # The topic in focus: a pale band across the panel, behind the marks.
        return (
            alt.Chart(bands)
            .transform_filter(f"datum.topic == {FOCUS}")
            .mark_rect(color=BAND)
            .encode(
                y=y_channel,
                x=alt.value(0),
                x2=alt.value(panel_width),
                description="band:N",
            )
        )

    base = alt.Chart(prevalence)
    left = (
        alt.layer(
            band(y, left_w),
            base.mark_rule(strokeWidth=2).encode(
                x=alt.X(
                    "lower:Q",
                    title="share of the source (interval)",
                    axis=alt.Axis(format=".0%", tickCount=max(2, left_w // 70)),
                ),
                x2="upper:Q",
                y=y,
                yOffset=offset,
                color=colour,
            ),
            base.mark_point(filled=True, size=45, cursor="pointer").encode(
                x="estimate:Q", y=y, yOffset=offset, color=colour, tooltip=tip
            ),
        )
        .add_params(pick)
        .properties(
            width=left_w,
            height=height,
            title=alt.Title(
                wrap("How much each source carries each topic", left_w), anchor="start"
            ),
        )
    )
    diff = difference.assign(
        verdict=[verdict_word(v) for v in difference["clear"]],
    )
    diff_base = alt.Chart(diff)
    diff_tip = [
        alt.Tooltip("name:N", title="topic"),
        alt.Tooltip("estimate:Q", format="+.3f"),
        alt.Tooltip("lower:Q", format="+.3f"),
        alt.Tooltip("upper:Q", format="+.3f"),
        alt.Tooltip("verdict:N"),
    ]

    def diamonds(holds: bool):
        return (
            diff_base.transform_filter("datum.clear" if holds else "!datum.clear")
            .mark_point(
                filled=holds,
                size=60,
                shape="diamond",
                color=INK,
                stroke=INK,
                opacity=1,
                strokeWidth=1.5,
                cursor="pointer",
            )
            .encode(x="estimate:Q", y=y_bare, tooltip=diff_tip)
        )

    right = (
        alt.layer(
            band(y_bare, right_w),
            alt.Chart(pd.DataFrame({"zero": [0.0]})).mark_rule(color=FAINT).encode(x="zero:Q"),
            diff_base.mark_rule(strokeWidth=2, color=INK).encode(
                x=alt.X(
                    "lower:Q",
                    title=wrap(contrast, right_w),
                    axis=alt.Axis(
                        format="+.0%", tickCount=max(2, right_w // 80), labelOverlap="greedy"
                    ),
                ),
                x2="upper:Q",
                y=y_bare,
            ),
            diamonds(True),
            diamonds(False),
        )
        .add_params(pick)
        .properties(
            width=right_w,
            height=height,
            title=alt.Title(
                wrap(
                    f"Difference (filled: {VERDICT_WORDS[True]}; hollow: {VERDICT_WORDS[False]})",
                    right_w,
                ),
                anchor="start",
            ),
        )
    )
    with warnings.catch_warnings():
        # One click selection shared by both panels is what we want; Altair merges it and warns.
        warnings.filterwarnings("ignore", message="Automatically deduplicated selection")
        chart = alt.hconcat(left, right, spacing=16)
    return chart.add_params(_focus_param(focus)).properties(
        padding=PADDING,
        title=alt.Title(
            "Topic prevalence by source",
            subtitle=wrap(note, width),
            anchor="start",
            fontSize=14,
        ),
    )


def _js(text: str) -> str:
    import json

    return json.dumps(str(text))


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
    data = pd.concat(
        [_place_names(part, width, height, n_labels) for _, part in data.groupby("topic")],
        ignore_index=True,
    )
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


def _place_names(part: pd.DataFrame, width: int, height: int, n_labels: int) -> pd.DataFrame:
    """One topic's rows of the term map with ``label``, ``dx``, ``dy`` and ``align``: each ranked
    term (rank order) takes the first place around its dot where its name overlaps no other name
    or dot and stays inside the chart; with none free it shows only its rank.

    Pixels are computed as the chart draws them: ``share_of_term`` on [0, 1] across ``width``;
    ``probability`` on a log scale over the topic's values, ``MAP_PAD`` pixels in from each end.
    """
    import numpy as np

    part = part.reset_index(drop=True)
    n = len(part)
    logs = np.log(part["probability"].clip(lower=1e-12).to_numpy(float))
    lo, hi = logs.min(), logs.max()
    span = hi - lo if hi > lo else 1.0
    px = part["share_of_term"].to_numpy(float) * width
    py = MAP_PAD + (hi - logs) / span * (height - 2 * MAP_PAD)
    dots = np.column_stack([px - 4, py - 4, px + 4, py + 4])
    taken = np.empty((0, 4))
    labels, dxs, dys, aligns = [""] * n, [6] * n, [0] * n, ["left"] * n
    ranks = part["rank"].to_numpy()
    terms = part["term"].to_numpy()
    ranked = np.flatnonzero(part["kind"].to_numpy() == "ranked")

    def free(box, own) -> bool:
        x0, y0, x1, y1 = box
        if x0 < 0 or x1 > width or y0 < 0 or y1 > height:
            return False
        others = np.vstack([taken, np.delete(dots, own, axis=0)])
        hit = (x1 > others[:, 0]) & (others[:, 2] > x0) & (y1 > others[:, 1]) & (others[:, 3] > y0)
        return not hit.any()

    for i in ranked[np.argsort(ranks[ranked], kind="stable")]:
        rank = int(ranks[i])
        texts = [f"{rank} {terms[i]}"] if rank <= n_labels else []
        texts.append(str(rank))
        for text in texts:
            w = _NAME_CHAR_PX * len(text) + 2
            for dx, dy, align in _PLACES:
                left = px[i] + dx - (w if align == "right" else w / 2 if align == "center" else 0)
                box = (left, py[i] + dy - _LABEL_H / 2, left + w, py[i] + dy + _LABEL_H / 2)
                if free(box, i):
                    taken = np.vstack([taken, box])
                    labels[i], dxs[i], dys[i], aligns[i] = text, dx, dy, align
                    break
            if labels[i]:
                break
    return part.assign(label=labels, dx=dxs, dy=dys, align=aligns)


def wording_chart(wording: pd.DataFrame, *, sources: tuple[str, str], width: int = 300):
    """Terms the topic's documents use more in one source than the other, as diverging bars.

    Parameters
    ----------
    wording : DataFrame
        Columns ``term`` and ``score`` (positive: used more in ``sources[0]``; negative: more in
        ``sources[1]``), a handful of terms per side.
    sources : (str, str)
        The two sources compared, for the colours and the axis title.
    """
    alt = _alt()
    data = wording[["term", "score"]].copy()
    data["leans"] = [sources[0] if s > 0 else sources[1] for s in data["score"]]
    return (
        alt.Chart(data)
        .mark_bar()
        .encode(
            x=alt.X(
                "score:Q",
                title=wrap(
                    f"\u2190 more in {sources[1]} \u00b7 more in {sources[0]} \u2192", width
                ),
                axis=alt.Axis(tickCount=max(2, width // 70)),
            ),
            y=alt.Y("term:N", sort=alt.EncodingSortField("score", order="descending"), title=None),
            color=alt.Color("leans:N", scale=_source_scale(list(sources)), legend=None),
            tooltip=[
                alt.Tooltip("term:N"),
                alt.Tooltip("score:Q", format="+.2f"),
                alt.Tooltip("leans:N", title="more in"),
            ],
        )
        .properties(
            width=width,
            height=alt.Step(15),
            padding=PADDING,
            title=alt.Title(wrap("How each source words it", width), anchor="start"),
        )
    )


def covariate_chart(
    prevalence: pd.DataFrame, *, covariate: str, captions: dict | None = None
) -> alt.LayerChart:
    """Estimated prevalence of each topic at each value of one covariate, with intervals.

    Parameters
    ----------
    prevalence : DataFrame
        ``PrevalenceModel.prevalence``: columns ``topic``, ``covariate``, ``value``,
        ``estimate``, ``ci_low``, ``ci_high``, ``ci_level``.
    covariate : str
        The covariate shown (rows of other covariates are left out).
    captions : dict, optional
        Topic -> caption for the rows (default: the topic number).
    """
    data = prevalence[prevalence["covariate"] == covariate].copy()
    names = captions or {}
    data["name"] = [names.get(t, str(t)) for t in data["topic"]]
    values = list(dict.fromkeys(data["value"]))
    level = float(data["ci_level"].iloc[0]) if len(data) else 0.95
    color = alt.Color(
        "value:N",
        title=covariate,
        sort=values,
        scale=alt.Scale(
            domain=values, range=(PALETTE * (len(values) // len(PALETTE) + 1))[: len(values)]
        ),
    )
    y = alt.Y("name:N", sort=alt.EncodingSortField("topic", order="ascending"), title=None)
    offset = alt.YOffset("value:N", sort=values)
    base = alt.Chart(data).encode(y=y, yOffset=offset, color=color)
    whiskers = base.mark_rule(strokeWidth=2).encode(
        x=alt.X("ci_low:Q", title=f"estimated prevalence ({level:.0%} interval)"),
        x2="ci_high:Q",
    )
    dots = base.mark_point(filled=True, size=40).encode(
        x="estimate:Q",
        tooltip=[
            alt.Tooltip("name:N", title="topic"),
            alt.Tooltip("value:N", title=covariate),
            alt.Tooltip("estimate:Q", format=".3f"),
            alt.Tooltip("ci_low:Q", format=".3f"),
            alt.Tooltip("ci_high:Q", format=".3f"),
        ],
    )
    return (whiskers + dots).properties(
        width=320,
        height=alt.Step(max(6, 14 // max(1, len(values) // 2))),
        title=alt.Title(f"Prevalence by {covariate}", anchor="start"),
    )
