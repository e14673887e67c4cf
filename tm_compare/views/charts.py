"""Charts of a sweep and of one model: tidy DataFrame in, Altair chart out, nothing displayed.

Every chart takes small, already aggregated tables (one row per fit, per topic and source, or per
term), never one row per document. Clicks reach Python through named selections:

- ``fit_pick`` (fields ``k``, ``seed``) on :func:`sweep_chart`, whose fit on show is the variable
  parameter ``picked`` (``"k:seed"``);
- ``topic_pick`` (field ``topic``) on :func:`source_chart` and :func:`terms_chart`.

:func:`time_chart` also holds every topic and shows the one in ``focus``.

The topic on show is a variable parameter named ``focus``: a widget changes it without rebuilding
the chart (``chart_widget.params.focus = 3``); a chart built for a view carries the view's topic as
the parameter's first value, so it is right from the first draw.

Colour means one thing: which source. Everything else is drawn in ink: whether a difference
holds up is the mark's fill (filled: holds up; hollow: could be chance, words from
:data:`tm_compare.options.VERDICT_WORDS`), the topic in focus a pale band behind its row.

Altair is imported when the first chart is built, so importing the views stays fast.
"""

from __future__ import annotations

import warnings

import pandas as pd

from ..options import VERDICT_WORDS, verdict_word
from ._chart_style import (  # noqa: F401  (re-exported: charts.INK, charts.FOCUS, ...)
    ACCENT,
    BAND,
    CAPTION_CHARS,
    CHAR_PX,
    FAINT,
    FIT_PICK,
    FOCUS,
    INK,
    PADDING,
    PALETTE,
    PICKED,
    TOPIC_PICK,
    WARN,
    WARN_BG,
    _alt,
    _focus_param,
    _source_scale,
    fit_key,
    short,
    wrap,
)
from ._term_map import MAP_PAD, term_map  # noqa: F401  (re-exported)


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
        # The note sits on the side of the rule with room: right of it in the lower half of
        # the grid, left of it in the upper half, so it never runs past the chart's edge.
        low, high = data["k"].min(), data["k"].max()
        upper = high > low and recommended_k > (low + high) / 2
        layers.append(
            alt.Chart(mark)
            .mark_text(
                align="right" if upper else "left",
                dx=-5 if upper else 5,
                dy=-4,
                color=INK,
                fontWeight="bold",
            )
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
        # The topic in focus: a pale band across the panel, behind the marks. Every topic has
        # its band, seen (and named to screen readers) only while in focus: a new focus then
        # changes two bands in place instead of adding and removing marks, which costs the
        # browser a repaint of the whole chart.
        in_focus = f"datum.topic == {FOCUS}"
        return (
            alt.Chart(bands)
            .mark_rect(color=BAND, aria=alt.expr(in_focus))
            .encode(
                y=y_channel,
                x=alt.value(0),
                x2=alt.value(panel_width),
                opacity=alt.condition(in_focus, alt.value(1), alt.value(0)),
                description="band:N",
            )
        )

    base = alt.Chart(prevalence)
    left = alt.layer(
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
        base.mark_point(filled=True, size=45, cursor="pointer")
        .encode(x="estimate:Q", y=y, yOffset=offset, color=colour, tooltip=tip)
        .add_params(pick),
    ).properties(
        width=left_w,
        height=height,
        title=alt.Title(wrap("How much each source carries each topic", left_w), anchor="start"),
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

    right = alt.layer(
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
        diamonds(True).add_params(pick),
        diamonds(False),
    ).properties(
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
    return (
        alt.Chart(wording_rows(wording, sources))
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


def wording_rows(wording: pd.DataFrame, sources: tuple[str, str]) -> pd.DataFrame:
    """The data of :func:`wording_chart`: ``term``, ``score`` and ``leans`` (the source the term
    leans to), so a view can swap one topic's rows for another's in the drawn chart."""
    data = wording[["term", "score"]].copy()
    data["leans"] = [sources[0] if s > 0 else sources[1] for s in data["score"]]
    return data


def time_chart(
    frame: pd.DataFrame,
    *,
    focus: int | None = None,
    min_period_docs: int | None = None,
    window: tuple | None = None,
    note: str = "",
    width: int = 560,
    height: int = 200,
):
    """One topic over time: a line and a band per source; thin periods as hollow faint rings.

    Parameters
    ----------
    frame : DataFrame
        One row per topic, source and period: ``topic``, ``source``, ``period_start``,
        ``period`` (label), ``estimate``, ``lower``, ``upper``, ``n_documents``, ``few`` (bool:
        too few documents to trust). Lines and bands run through the periods that are not
        ``few`` only, broken where one is; those that are get a hollow ring and no band.
    focus : int, optional
        The topic shown (a variable parameter, so a widget switches topics in place).
    min_period_docs : int, optional
        Stated in the subtitle with ``note``.
    window : (start, end), optional
        Dates the other panels are narrowed to, shaded.
    """
    alt = _alt()
    data = frame.copy()
    data["start"] = pd.to_datetime(data["period_start"]).dt.strftime("%Y-%m-%d")
    data = data.sort_values(["topic", "source", "start"], kind="stable")
    # A new run of trusted periods starts after each thin one: lines and bands break there.
    data["run"] = data.groupby(["topic", "source"])["few"].cumsum()
    sources = sorted(data["source"].unique().tolist())
    # One legend for every layer: drawn as solid strokes, whatever the layer's opacity.
    key = alt.Legend(
        orient="top", title=None, symbolType="stroke", symbolOpacity=1, symbolStrokeWidth=3
    )
    colour = quiet = alt.Color("source:N", scale=_source_scale(sources), legend=key)
    x = alt.X(
        "start:T",
        title=None,
        axis=alt.Axis(format="%d %b", labelAngle=0, labelOverlap="greedy", labelSeparation=8),
    )
    y = alt.Y("estimate:Q", title="share of the source", axis=alt.Axis(format=".0%"))
    tip = [
        alt.Tooltip("source:N"),
        alt.Tooltip("period:N"),
        alt.Tooltip("estimate:Q", format=".3f"),
        alt.Tooltip("lower:Q", format=".3f"),
        alt.Tooltip("upper:Q", format=".3f"),
        alt.Tooltip("n_documents:Q", title="documents"),
    ]
    base = alt.Chart(data).transform_filter(f"datum.topic == {FOCUS}")
    trusted = base.transform_filter("!datum.few")
    detail = alt.Detail("run:N")
    layers = [
        trusted.mark_area(opacity=0.16).encode(
            x=x, y="lower:Q", y2="upper:Q", color=quiet, detail=detail
        ),
        # The interval of each period too, so a lone trusted period still shows its band.
        trusted.mark_rule(opacity=0.5).encode(x=x, y="lower:Q", y2="upper:Q", color=quiet),
        trusted.mark_line(strokeWidth=2).encode(x=x, y=y, color=colour, detail=detail),
        trusted.mark_point(filled=True, size=36).encode(x=x, y=y, color=quiet, tooltip=tip),
        base.transform_filter("datum.few && isValid(datum.estimate)")
        .mark_point(filled=False, size=60, strokeWidth=1.5, opacity=0.45)
        .encode(x=x, y=y, color=quiet, tooltip=tip),
    ]
    if window is not None:
        span = pd.DataFrame(
            {"from": [pd.Timestamp(window[0]).strftime("%Y-%m-%d")],
             "to": [pd.Timestamp(window[1]).strftime("%Y-%m-%d")]}
        )  # fmt: skip
        shade = alt.Chart(span).mark_rect(color=FAINT, opacity=0.3).encode(x="from:T", x2="to:T")
        layers.insert(0, shade)
    thin = (
        f"Hollow faint rings: fewer than {min_period_docs} documents in the period, "
        "shown apart from the line. "
        if min_period_docs
        else ""
    )
    return (
        alt.layer(*layers)
        .add_params(_focus_param(focus))
        .properties(
            width=width,
            height=height,
            title=alt.Title(
                "The topic over time",
                subtitle=wrap(thin + note, width),
                anchor="start",
                fontSize=13,
            ),
        )
    )


#: Shades of ink for the values of a covariate other than the source (colour means source).
SHADES = ["#2b2d31", "#6b7078", "#a3a8b0", "#4f5d75"]
SHAPES = ["circle", "square", "triangle-up", "diamond", "cross", "triangle-down"]


def covariate_chart(prevalence: pd.DataFrame, *, covariate: str, captions: dict | None = None):
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
    alt = _alt()
    # Sources keep their colours; any other covariate's values are shades of ink and shapes.
    palette = PALETTE if covariate == "source" else SHADES
    color = alt.Color(
        "value:N",
        title=covariate,
        sort=values,
        scale=alt.Scale(
            domain=values, range=(palette * (len(values) // len(palette) + 1))[: len(values)]
        ),
    )
    shape = alt.Shape(
        "value:N",
        title=covariate,
        sort=values,
        scale=alt.Scale(
            domain=values, range=(SHAPES * (len(values) // len(SHAPES) + 1))[: len(values)]
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
        shape=shape,
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
