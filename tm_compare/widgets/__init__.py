"""Notebook views of a sweep and of one model: ipywidgets layouts holding offline Altair charts.

- :class:`SweepView`: choose the number of topics on evidence and pick a fit.
- :class:`TopicView`: read one model across sources, topic by topic, and label its topics.

Every number shown comes from the plain functions of :mod:`tm_compare.sweeps`,
:mod:`tm_compare.comparison`, :mod:`tm_compare.terms`, :mod:`tm_compare.documents` and
:mod:`tm_compare.labels`; the views only arrange them.
"""

from .sweep_view import SweepView
from .topic_view import TopicView

__all__ = ["SweepView", "TopicView"]
