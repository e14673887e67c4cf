"""A self-contained HTML report of one model of a project: one file, charts inline, no scripts.

The report is written for a reader who has never seen the tool: what went in and what was
removed, how k was chosen, the topics, the comparison between sources with its uncertainty and
influence check, documents per topic, label agreement, how to reproduce it, and cautions.

It is built from the tables of :func:`tm_compare.report.exports.collect`, the same objects the
exports write (and, for the model's tables, the views show: :mod:`tm_compare.results`). Charts are SVG images in ``data:`` URLs; the page carries a Content-Security-Policy that
allows nothing else, and every value from the corpus or the labels is escaped by the template.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path

from .._atomic import atomic_write_text

TEMPLATE = "report.html.j2"
REPORT_FILE = "report.html"


def render(results) -> str:
    """The report of ``results`` (a :class:`tm_compare.report.exports.Results`) as HTML text."""
    import jinja2

    from ._sections import context

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("tm_compare.report", "templates"),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # chart-building notices, not the reader's
        values = context(results)
    return env.get_template(TEMPLATE).render(**values)


def write_report(
    project,
    k: int | None = None,
    seed: int | None = None,
    out: str | os.PathLike | None = None,
    *,
    results=None,
    **settings,
) -> Path:
    """Write the HTML report of one model of ``project`` and return its path.

    Parameters
    ----------
    project : Project or path
    k, seed : int, optional
        The model; by default the one the sweep recommends (``k`` alone takes seed 0).
    out : path, optional
        Where to write it (default ``PROJECT/report/report.html``).
    results : Results, optional
        Tables already collected with :func:`tm_compare.report.exports.collect` (then ``k``,
        ``seed`` and the settings are ignored).
    **settings
        Settings of :class:`tm_compare.results.ModelResults` (weighting, cluster, n_boot, ...).
    """
    from .exports import EXPORT_FOLDER, collect

    if results is None:
        results = collect(project, k, seed, **settings)
    target = Path(out) if out is not None else results.project.folder(EXPORT_FOLDER) / REPORT_FILE
    return atomic_write_text(target, render(results))
