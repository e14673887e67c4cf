"""The look shared by every chart: colours, names of parameters and selections, text sizes.

:mod:`.charts` re-exports every name here; chart modules import from here.
"""

from __future__ import annotations

import textwrap

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
    from ._loading import altair

    return altair()


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
