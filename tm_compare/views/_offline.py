"""Altair charts as widgets with no network: the JavaScript bundle is built once and kept on disk.

``alt.JupyterChart`` fetches vega-embed from a CDN unless made offline, and its own offline
switch builds a ~0.9 MB bundle in every kernel (3-9 s). Here the bundle is built once per
(altair, vl-convert, Vega-Lite) version with vl-convert, cached under the user cache folder,
and a ``JupyterChart`` subclass points its ``_esm`` at that file, so a kernel reads it once.

A chart's front end, when it draws (or draws again, e.g. when a cell is re-shown), takes its
parameters from the spec and reports them back to Python, overwriting any value Python set before
the drawing existed. :meth:`hold_param` makes Python the owner: the held value is set now, and set
again whenever the front end reports another one (the "wrong topic on first draw" defect). A
parameter value the front end merely echoes back (Python has just set it) is not reported again.

:meth:`show_rows` replaces the rows of a chart's dataset in the browser without sending the spec
again, so the chart redraws its marks but is not rebuilt (the wording chart on a topic switch).
The rows live in the synced trait ``_py_to_js_updates`` that altair's front end already reads
(made for VegaFusion); the bundle also applies them whenever the chart is drawn anew, so a
re-shown cell, or a chart first drawn after the change, shows them too.

Two more edits serve a topic switch in the browser. Every chart of a page draws with one shared
vega-embed (the first copy of the bundle that loaded, found under ``globalThis`` by the bundle's
fingerprint): anywidget loads each chart's module anew, and one copy means one library for the
browser to compile and warm. With ``debounce_wait=0`` a click is sent to Python in the same task;
altair's debounce would wait for a timer that the browser runs only after painting a frame.

Altair itself is imported only when the first chart widget is made.
"""

from __future__ import annotations

import functools
import os
from importlib import metadata
from pathlib import Path

import platformdirs

from .._atomic import atomic_write_text
from .._hashing import fingerprint

CACHE_ENV = "TM_COMPARE_CACHE_DIR"
EMBED_OPTIONS = {"renderer": "svg", "actions": False}


def cache_dir() -> Path:
    """Folder of tm_compare's per-user cache: ``$TM_COMPARE_CACHE_DIR``, else the platform's
    user cache folder (``~/.cache/tm_compare`` on Linux, by :mod:`platformdirs`)."""
    env = os.environ.get(CACHE_ENV)
    if env:
        return Path(env).expanduser()
    return platformdirs.user_cache_path("tm_compare", appauthor=False)


_APPLY_ROWS = """
async function applyHeldRows(model, api) {
    // tm_compare: rows that replaced a dataset after the spec was sent (see _offline.py).
    for (const update of model.get("_py_to_js_updates") ?? []) {
        if (update.namespace === "data" && dataRef(api.view, update.name, update.scope)) {
            setDataValue(api.view, update.name, update.scope, update.value);
        }
    }
    await api.view.runAsync();
}
"""
_REEMBED_END = "\n    }\n\n    model.on('change:spec', reembed);"
_PARAM_HANDLER = "const paramHandler = (_, value) => {"
_EMBED = "api = await vegaEmbed(el, spec, embedOptions);"
_DEBOUNCED = "lodashDebounce({handler}, wait, debounceOpts)"
#: Stands for the bundle's fingerprint in the source; replaced in the built bundle.
_BUNDLE_KEY = "__tm_compare_bundle_key__"
_SHARED_EMBED = """
function sharedEmbed() {
    // tm_compare: every chart of the page draws with the vega-embed of the first copy of this
    // bundle that loaded (see _offline.py), so the browser compiles and warms one copy.
    const shared = (globalThis.__tm_compare_vega_embed ??= {});
    return (shared["KEY"] ??= vegaEmbed);
}
""".replace("KEY", _BUNDLE_KEY)
#: Our additions to altair's front end (index.js), each at a place that must occur once:
#: rows Python replaced are applied after every drawing, once its listeners are in place; a
#: parameter the front end only echoes (Python just set it to that value) is not sent back, which
#: saves two messages per chart and topic switch; every chart draws with one shared vega-embed;
#: with no wait asked for (``debounce_wait=0``) a click is sent in the same task, not after a
#: timer that the browser runs only after painting the next frame.
_EDITS = (
    (_REEMBED_END, "\n        await applyHeldRows(model, api);" + _REEMBED_END),
    (
        _PARAM_HANDLER,
        _PARAM_HANDLER
        + "\n                if (JSON.stringify((model.get('_params') ?? {})[paramName]) === "
        + "JSON.stringify(value)) return;",
    ),
    (_EMBED, _EMBED.replace("vegaEmbed(", "sharedEmbed()(")),
    *(
        (
            _DEBOUNCED.format(handler=handler),
            f"(wait > 0 ? {_DEBOUNCED.format(handler=handler)} : {handler})",
        )
        for handler in ("selectionHandler", "paramHandler")
    ),
)


def _widget_source() -> str:
    # altair's own front-end code, minus the CDN imports that the bundle replaces
    # (the same trimming altair's JupyterChart.enable_offline does), plus our _EDITS.
    import altair as alt

    from ..errors import MissingDependencyError

    src = (Path(alt.__file__).parent / "jupyter" / "js" / "index.js").read_text(encoding="utf-8")
    lines = src.split("\n")
    while lines and (not lines[0].strip() or lines[0].startswith(("import", "//"))):
        lines.pop(0)
    src = "\n".join(lines)
    for anchor, replacement in _EDITS:
        if src.count(anchor) != 1:
            msg = (
                f"altair {alt.__version__}'s chart front end (altair/jupyter/js/index.js) is not "
                f"the one tm_compare extends: {anchor.strip()!r} is no longer found once. "
                "Install an altair version tm_compare supports (see pyproject.toml)."
            )
            raise MissingDependencyError(msg)
        src = src.replace(anchor, replacement)
    return src + _APPLY_ROWS + _SHARED_EMBED


def bundle_path() -> Path:
    """Path of the cached offline bundle, built with vl-convert the first time it is needed."""
    import vl_convert as vlc
    from altair.utils._importers import vl_version_for_vl_convert

    source = _widget_source()
    vl_version = vl_version_for_vl_convert()
    key = fingerprint(source, vl_version, metadata.version("vl-convert-python"))
    path = cache_dir() / f"altair-widget-{vl_version}-{key}.js"
    if not path.exists():
        bundle = vlc.javascript_bundle(source, vl_version=vl_version)
        atomic_write_text(path, bundle.replace(_BUNDLE_KEY, key))
    return path


def _hold_param(self, name: str, value) -> None:
    """Keep parameter ``name`` at ``value``: set it now, and again whenever a drawing of the
    chart (or a new chart given to the widget) reports another value."""
    self._held = {**getattr(self, "_held", {}), name: value}
    if getattr(self.params, name, None) != value:
        setattr(self.params, name, value)


def _reassert(self, change) -> None:
    # Runs after JupyterChart's own observer copied the front end's values into ``params``.
    for name, value in getattr(self, "_held", {}).items():
        if name in change["new"] and change["new"][name] != value:
            setattr(self.params, name, value)


def _show_rows(self, rows: list[dict]) -> None:
    """Replace the rows of the chart's top-level dataset in the browser (the spec stays)."""
    name = self.spec["data"]["name"]
    self._py_to_js_updates = [{"namespace": "data", "name": name, "scope": [], "value": rows}]


def _rows(self) -> list[dict]:
    """The rows of the chart's top-level dataset as drawn now."""
    for update in self._py_to_js_updates or []:
        if update["namespace"] == "data":
            return update["value"]
    return self.spec["datasets"][self.spec["data"]["name"]]


def _forget_rows(self, change) -> None:
    # A new chart carries its own rows.
    self._py_to_js_updates = None


@functools.cache
def chart_class() -> type:
    """The ``JupyterChart`` subclass whose front end is the cached bundle (made once per kernel)."""
    import altair as alt
    import traitlets

    # anywidget turns a Path class attribute into file contents when the class is created,
    # so the class is made only after the bundle exists.
    return type(
        "OfflineChart",
        (alt.JupyterChart,),
        {
            "_esm": bundle_path(),
            "__module__": __name__,
            "__doc__": "JupyterChart served offline; hold_param keeps a parameter Python's, "
            "show_rows replaces the data in place.",
            # A click's selection is not echoed back to the pages (ipywidgets echoes every
            # change a page makes; altair's front end never redraws from this trait): one
            # message less per topic switch.
            "_vl_selections": traitlets.Dict().tag(sync=True, echo_update=False),
            "hold_param": _hold_param,
            "_reassert_held": traitlets.observe("_params")(_reassert),
            "show_rows": _show_rows,
            "rows": property(_rows),
            "_forget_rows": traitlets.observe("chart")(_forget_rows),
        },
    )


def chart_widget(chart, **kwargs):
    """Wrap an Altair chart in an offline widget (SVG renderer, no action menu).

    A click reaches Python at once (``debounce_wait=0``; altair waits 10 ms by default, which
    only pays for selections dragged across a chart, and the views have none)."""
    kwargs.setdefault("embed_options", EMBED_OPTIONS)
    kwargs.setdefault("debounce_wait", 0)
    return chart_class()(chart, **kwargs)
