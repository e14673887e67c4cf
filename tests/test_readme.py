"""README examples still run: every ```python block of README.md, top to bottom, in one namespace.

The blocks run in a fresh folder holding ``articles.csv``: the invented demo articles
(:func:`tm_compare.demo.make_frame`) with their columns renamed to the names the README uses
(``COLUMNS``). ``SMALLER`` swaps a few pieces of README code for cheaper ones so the test fits
tiny models; every piece must appear in the README as written, so the mapping cannot go stale
without failing. Tracebacks point at README.md lines, and a name kept only for one release (a
FutureWarning) fails the test, so the README shows today's names.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from tm_compare.demo import make_frame

README = Path(__file__).resolve().parents[1] / "README.md"
# demo column -> the README's column name
COLUMNS = {
    "id": "article_id",
    "source": "channel",
    "weight": "visits",
    "date": "published",
    "title": "headline",
    "text": "body",
}
# README code -> what the test runs instead (same calls, smaller grids)
SMALLER = {
    "k=range(5, 41, 5), seeds=3": "k=[4, 6], seeds=2",
    "result.get_fit(k=15, seed=0)": "result.get_fit(k=6, seed=0)",
    '"wave2.csv"': '"articles.csv"',
}
_BLOCK = re.compile(r"^```python\n(.*?)^```", re.DOTALL | re.MULTILINE)


def python_blocks(text: str) -> list[tuple[int, str]]:
    """Each ```python block with the README line number of its first line."""
    return [(text.count("\n", 0, m.start(1)) + 1, m.group(1)) for m in _BLOCK.finditer(text)]


def test_readme_has_python_examples_and_the_mapping_fits_them():
    text = README.read_text(encoding="utf-8")
    assert python_blocks(text), "README.md has no ```python block to run"
    stale = [piece for piece in SMALLER if piece not in text]
    assert not stale, f"SMALLER in tests/test_readme.py names code the README lacks: {stale}"


@pytest.mark.slow
@pytest.mark.filterwarnings(
    "error::FutureWarning"
)  # the README uses no name kept only for a release
def test_readme_examples_run(tmp_path, monkeypatch):
    make_frame(400, random_state=0).rename(columns=COLUMNS).to_csv(
        tmp_path / "articles.csv", index=False
    )
    monkeypatch.chdir(tmp_path)
    namespace: dict = {}
    for line, block in python_blocks(README.read_text(encoding="utf-8")):
        for piece, smaller in SMALLER.items():
            block = block.replace(piece, smaller)
        # Blank lines in front keep the README's line numbers in tracebacks.
        exec(compile("\n" * (line - 1) + block, str(README), "exec"), namespace)  # noqa: S102
    assert (tmp_path / "my-study" / "manifest.json").exists()
    assert (tmp_path / "report.html").stat().st_size > 0
