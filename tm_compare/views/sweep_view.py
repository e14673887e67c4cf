"""The sweep view: scores against k with the seed spread, the suggested k, and a fit picker."""

from __future__ import annotations

import ipywidgets as w
import traitlets

from .._deprecation import warn_renamed
from .._validation import param_error
from ..models.quality import describe
from ..models.scores import MEASURE_NAMES
from ..models.sweep_summary import converged_text, junk_columns, unconverged
from ..models.sweeps import Sweep
from ..options import default
from . import charts
from ._cards import esc
from ._offline import chart_widget
from ._row_table import RowTable

#: Measures a sweep can show: score column -> (name shown, which way is better).
MEASURES = {
    **{m: (f"{name} coherence", "higher") for m, name in MEASURE_NAMES.items()},
    "perplexity": ("held-out perplexity", "lower"),
    "stability": ("stability across seeds", "higher"),
    "diversity": ("topic diversity", "higher"),
}
_WHY_NPMI = (
    "NPMI is shown first: its scale is fixed (-1 to 1) and it tracks human judgements "
    "well, while the authors of C_V advise against relying on C_V alone."
)


def _measure_title(measure: str) -> str:
    name, better = MEASURES[measure]
    return f"{name} ({better} is better)"


class SweepView(w.VBox):
    """Choose the number of topics on evidence: one measure against k, the suggestion, the fits.

    Click a dot (a fit) or a row of the fits table to pick that fit; ``view.k`` and
    ``view.seed`` hold the pick and :meth:`picked_fit` returns it.

    Parameters
    ----------
    sweep : Sweep or Project or path
        A fitted sweep, or a project folder holding a saved one.
    measure : str
        Score shown first (default ``"npmi"``).
    k, seed : int, optional
        The fit picked when the view opens (default: the suggested fit; ``seed`` alone picks
        that seed at the suggested k, ``k`` alone the suggested seed, or seed 0 if the
        suggestion is at another k).
    prepared, labels : optional
        With the prepared corpus (and a label store), "Read this model" opens a
        :class:`TopicView` of the picked fit below (:meth:`show_fit`).
    """

    measure = traitlets.Unicode(default("measure"), help="Score column shown against k.")
    k = traitlets.Int(help="k of the picked fit.")
    seed = traitlets.Int(help="Seed of the picked fit.")

    def __init__(
        self, sweep, *, measure=default("measure"), k=None, seed=None, prepared=None, labels=None
    ):
        if not isinstance(sweep, Sweep):
            sweep = Sweep.load(sweep)
        elif not hasattr(sweep, "scores_"):
            accepted = "a fitted Sweep, or a Project or path holding a saved one"
            raise param_error("SweepView", "sweep", sweep, accepted, "Call sweep.fit(prepared).")
        self.sweep = sweep
        self.prepared = prepared
        self.labels = labels
        scores = sweep.scores_
        present = [m for m in MEASURES if m in scores.columns and scores[m].notna().any()]
        self.suggestion = sweep.recommend()
        self.heading = w.HTML("<h3 style='margin:4px 0'>How many topics?</h3>")
        self.measure_choice = w.Dropdown(
            options=[(MEASURES[m][0], m) for m in present],
            value=measure if measure in present else present[0],
            description="Score shown",
            style={"description_width": "initial"},
        )
        self.advice = w.HTML(self._advice_html())
        self.health = w.HTML(self._health_html())
        # The numbers behind the suggestion, one click away.
        self.numbers = w.Accordion(
            [w.HTML(self._numbers_html())], titles=("Numbers behind the suggestion",)
        )
        self.numbers.selected_index = None
        self.picked = w.HTML()
        self.use_suggested = w.Button(
            description="Pick the suggested fit", icon="star", layout=w.Layout(width="200px")
        )
        self.use_suggested.on_click(lambda _: self._pick(self.suggestion.k, self.suggestion.seed))
        self.open_model = w.Button(
            description="Read this model", icon="book", disabled=prepared is None
        )
        self.open_model.on_click(lambda _: self.show_fit())
        self.model_area = w.VBox()
        self.fits_table = RowTable(caption="Fits of the sweep (click a row to pick it)")
        self.fits_table.show_frame(
            self._table_frame(),
            [charts.fit_key(k, s) for k, s in zip(scores["k"], scores["seed"], strict=True)],
        )
        self.fits_table.observe(self._row_clicked, names="selected")
        self.k, self.seed = self._opening_fit(k, seed)
        self.measure = self.measure_choice.value
        self.chart = chart_widget(self._chart())
        self.chart.selections.observe(self._clicked, names=[charts.FIT_PICK])
        self.measure_choice.observe(lambda ch: setattr(self, "measure", ch["new"]), names="value")
        super().__init__(
            [
                self.heading,
                self.measure_choice,
                self.chart,
                self.advice,
                self.numbers,
                self.health,
                w.HBox([self.picked, self.use_suggested, self.open_model]),
                self.fits_table,
                self.model_area,
            ]
        )
        self.add_class("tmc-sweep-view")
        self._show_pick()

    def _opening_fit(self, k, seed) -> tuple[int, int]:
        s = self.suggestion
        k = int(s.k) if k is None else k
        if seed is None:
            seeds = sorted(b for a, b in self.sweep.fits_ if a == k)
            seed = int(s.seed) if k == s.k else (seeds[0] if seeds else 0)
        if (k, seed) not in self.sweep.fits_:
            listed = ", ".join(f"(k={a}, seed={b})" for a, b in self.sweep.fits_)
            raise param_error("SweepView", "k and seed", (k, seed), f"a fit of the sweep: {listed}")
        return int(k), int(seed)

    def _advice_html(self) -> str:
        s = self.suggestion
        return (
            f'<div style="font-size:13px;border-left:4px solid {charts.ACCENT};padding:4px 10px">'
            f"<b>Suggested: k = {int(s.k)}</b> (seed {int(s.seed)}). {esc(s.rule)}</div>"
        )

    def _numbers_html(self) -> str:
        steps = "".join(f"<li>{esc(line)}</li>" for line in self.suggestion.details)
        return (
            f'<ol style="font-size:12px;margin:2px 0;list-style:none;padding-left:4px">{steps}</ol>'
            f'<div style="font-size:12px;color:#6b7078">{_WHY_NPMI}</div>'
        )

    def _health_html(self) -> str:
        """Fits that did not converge, and junk topics per fit, in plain words."""
        scores = self.sweep.scores_
        lines = []
        stuck = unconverged(scores)
        if len(stuck):
            fits = ", ".join(
                f"k = {a} seed {b}" for a, b in zip(stuck["k"], stuck["seed"], strict=True)
            )
            lines.append(
                f'<b style="color:#b03a2e">{len(stuck)} of {len(scores)} fits did not '
                f"converge</b> (their topics still moved at the last pass): {esc(fits)}"
            )
        if {"near_empty", "near_duplicate"} <= set(scores.columns):
            cols = junk_columns(scores)
            junk = scores[(scores[cols] > 0).any(axis=1)]
            if len(junk):
                lines.append(
                    "Junk topics: "
                    + "; ".join(
                        esc(describe(int(r["k"]), **r[cols].astype(int).to_dict()))
                        + f" (seed {r['seed']})"
                        for _, r in junk.iterrows()
                    )
                )
        return f'<div style="font-size:12px">{"<br>".join(lines)}</div>' if lines else ""

    def _table_frame(self):
        scores = self.sweep.scores_
        cols = (
            ["k", "seed"]
            + [m for m in MEASURES if m in scores.columns]
            + [
                c
                for c in (
                    "near_empty",
                    "rarely_dominant",
                    "near_duplicate",
                    "passes",
                    "converged",
                    "fit_seconds",
                    "engine",
                )
                if c in scores.columns
            ]
        )
        frame = scores[cols].copy()
        if "converged" in frame:
            frame["converged"] = frame["converged"].map(converged_text)
        for col in frame.columns:
            if frame[col].dtype.kind == "f":
                frame[col] = frame[col].round(4)
        return frame

    def _chart(self):
        data = self.sweep.scores_[["k", "seed", self.measure]].rename(
            columns={self.measure: "value"}
        )
        return charts.sweep_chart(
            data,
            title=_measure_title(self.measure),
            recommended_k=self.suggestion.k,
            picked=(self.k, self.seed),
        )

    @traitlets.observe("measure")
    def _measure_changed(self, change):
        if hasattr(self, "chart"):
            self.chart.chart = self._chart()
            self.chart.hold_param(charts.PICKED, charts.fit_key(self.k, self.seed))

    @traitlets.observe("k", "seed")
    def _pick_changed(self, change):
        if hasattr(self, "chart"):
            self._show_pick()

    def _show_pick(self):
        key = charts.fit_key(self.k, self.seed)
        # Held, not just set: a drawing of the chart reports the spec's value back and would
        # otherwise overwrite the pick (the first-draw defect, see views/_offline.py).
        self.chart.hold_param(charts.PICKED, key)
        self.fits_table.selected = key
        self.picked.value = f"<b>Picked:</b> k = {self.k}, seed {self.seed}&nbsp;&nbsp;"

    def _pick(self, k, seed):
        with self.hold_trait_notifications():
            self.k, self.seed = int(k), int(seed)

    def _clicked(self, change):
        value = change["new"].value
        if value:
            self._pick(value[0]["k"], value[0]["seed"])

    def _row_clicked(self, change):
        if change["new"]:
            k, seed = str(change["new"]).split(":")
            self._pick(k, seed)

    def picked_fit(self):
        """The picked fit (``sweep.get_fit(view.k, view.seed)``)."""
        return self.sweep.get_fit(self.k, self.seed)

    def picked_model(self):
        """Deprecated: use :meth:`picked_fit`."""
        warn_renamed("SweepView.picked_model()", "SweepView.picked_fit()")
        return self.picked_fit()

    def show_fit(self, **options):
        """Open a :class:`TopicView` of the picked fit under the sweep view and return it."""
        from .topic_view import TopicView

        view = TopicView(self.picked_fit(), self.prepared, labels=self.labels, **options)
        for old in self.model_area.children:
            old.close()
        self.model_area.children = [view]
        return view

    def show_model(self, **options):
        """Deprecated: use :meth:`show_fit`."""
        warn_renamed("SweepView.show_model()", "SweepView.show_fit()")
        return self.show_fit(**options)
