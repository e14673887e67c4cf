"""Altair charts as widgets with no network: the JavaScript bundle is built once and kept on disk.

``alt.JupyterChart`` fetches vega-embed from a CDN unless made offline, and its own offline
switch builds a ~0.9 MB bundle in every kernel (3-9 s). Here the bundle is built once per
(altair, vl-convert, Vega-Lite) version with vl-convert, cached under the user cache folder,
and a ``JupyterChart`` subclass points its ``_esm`` at that file, so a kernel reads it once.

A chart's front end, when it draws (or draws again, e.g. when a cell is re-shown), takes its
parameters from the spec and reports them back to Python, overwriting any value Python set before
the drawing existed. :meth:`hold_param` makes Python the owner: the held value is set now, and set
again whenever the front end reports another one (the "wrong topic on first draw" defect).

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


def _widget_source() -> str:
    # altair's own front-end code, minus the CDN imports that the bundle replaces
    # (the same trimming altair's JupyterChart.enable_offline does).
    import altair as alt

    src = (Path(alt.__file__).parent / "jupyter" / "js" / "index.js").read_text(encoding="utf-8")
    lines = src.split("\n")
    while lines and (not lines[0].strip() or lines[0].startswith(("import", "//"))):
        lines.pop(0)
    return "\n".join(lines)


def bundle_path() -> Path:
    """Path of the cached offline bundle, built with vl-convert the first time it is needed."""
    import vl_convert as vlc
    from altair.utils._importers import vl_version_for_vl_convert

    source = _widget_source()
    vl_version = vl_version_for_vl_convert()
    key = fingerprint(source, vl_version, metadata.version("vl-convert-python"))
    path = cache_dir() / f"altair-widget-{vl_version}-{key}.js"
    if not path.exists():
        atomic_write_text(path, vlc.javascript_bundle(source, vl_version=vl_version))
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
            "__doc__": "JupyterChart served offline; hold_param keeps a parameter Python's.",
            "hold_param": _hold_param,
            "_reassert_held": traitlets.observe("_params")(_reassert),
        },
    )


def chart_widget(chart, **kwargs):
    """Wrap an Altair chart in an offline widget (SVG renderer, no action menu)."""
    kwargs.setdefault("embed_options", EMBED_OPTIONS)
    return chart_class()(chart, **kwargs)
