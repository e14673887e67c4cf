"""Notebook views of a sweep and of one model: ipywidgets layouts holding offline Altair charts.

- :class:`SweepView`: choose the number of topics on evidence and pick a fit.
- :class:`TopicView`: read one model across sources, topic by topic, and label its topics.
- :mod:`.charts`: pure chart functions (tidy DataFrame in, Altair chart out), shared with the report.
- :mod:`.ipython`: ``%load_ext tm_compare`` and the ``%tm_compare`` line magic.

Every number shown comes from :mod:`tm_compare.results`; the views only arrange it. The widget
classes are imported on first use, so that the report can draw charts without ipywidgets, and
Altair when the first chart is built, so that importing the views stays fast; importing a view
class starts loading Altair in a background thread (:mod:`._loading`).
"""

import importlib

_LAZY = {"SweepView": "sweep_view", "TopicView": "topic_view"}
__all__ = sorted(_LAZY)


def __getattr__(name: str):
    if name in _LAZY:
        view = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        from ._loading import warm_up

        # Altair (and for a topic view the compiled bootstrap) load in the background while
        # the notebook goes on: the first view draws sooner (see ._loading).
        warm_up("altair", *(["bootstrap"] if name == "TopicView" else []))
        return view
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
