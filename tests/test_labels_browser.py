"""The labelling form in a real browser (JupyterLab on 127.0.0.1, headless Debian Chromium,
Playwright): the team's categories edited from the form, agreement shown only once it can be
computed, an unchanged save that adds nothing, local times with the stored value on hover, and
inputs that stay whole at 1,000 px. The form is shown on its own, for a fit named by its
fingerprint, so the test fits no model; inside ``TopicView`` it is the same widget at full width.
"""

from __future__ import annotations

import re

import nbformat
import pytest
from _chromium import ARTIFACTS, chromium, require_browser
from test_browser import KERNEL_IDLE, LOCAL, TOKEN, jupyter_lab, run_all_cells

pytestmark = [pytest.mark.browser, pytest.mark.slow]

FIT = "quillhaven-k6-s0"
SETUP = f"""from tm_compare.labels.store import LabelStore
from tm_compare.views._labels_panel import LabelsPanel

store = LabelStore("labels.sqlite", analyst="analyst_a")
store.define_categories(["housing", "transit"])
colleague = store.as_analyst("analyst_b")
for topic, category in enumerate(["housing", "transit", "transit"]):
    colleague.save("{FIT}", topic, name=f"topic {{topic}}", verdict="usable", category=category)
panel = LabelsPanel(store, "{FIT}", poll_seconds=1)
panel.show_topic(2)
panel"""


def _notebook(path, *sources):
    nb = nbformat.v4.new_notebook(
        cells=[nbformat.v4.new_code_cell(s, id=f"c{i}") for i, s in enumerate(sources)]
    )
    nb.metadata["kernelspec"] = {
        "display_name": "Python 3 (ipykernel)",
        "language": "python",
        "name": "python3",
    }
    nbformat.write(nb, path)


def _covered(page, element) -> list[str]:
    """Points of ``element`` (corners inset by 1 px, and its centre) where another element lies
    on top of it, or that fall outside the window."""
    return element.evaluate(
        """el => {
            const r = el.getBoundingClientRect();
            const points = [[r.left + 1, r.top + 1], [r.right - 1, r.top + 1],
                            [r.left + 1, r.bottom - 1], [r.right - 1, r.bottom - 1],
                            [(r.left + r.right) / 2, (r.top + r.bottom) / 2]];
            return points.filter(([x, y]) => {
                if (x < 0 || y < 0 || x > window.innerWidth || y > window.innerHeight) return true;
                const top = document.elementFromPoint(x, y);
                return !(top === el || el.contains(top));
            }).map(([x, y]) => `${Math.round(x)},${Math.round(y)}`);
        }"""
    )


def test_label_categories_and_agreement_in_jupyterlab(tmp_path):
    require_browser()

    import krippendorff
    import numpy as np

    from tm_compare.labels.store import LabelStore

    root = tmp_path / "lab"
    root.mkdir()
    _notebook(root / "labels.ipynb", SETUP)
    ARTIFACTS.mkdir(exist_ok=True)
    requests: list[str] = []
    with jupyter_lab(root, tmp_path / "state") as base, chromium() as browser:
        page = browser.new_page(viewport={"width": 1000, "height": 900})
        page.on("request", lambda r: requests.append(r.url))
        page.goto(f"{base}/lab/tree/labels.ipynb?reset&token={TOKEN}")
        page.get_by_text(KERNEL_IDLE).first.wait_for(timeout=180_000)
        run_all_cells(page)
        form = page.locator(".tmc-labels").first
        form.wait_for(timeout=60_000)

        # Only the colleague has labelled: no figure, the sentence saying what it needs.
        agreement = form.get_by_text("Agreement between analysts").locator("..")
        assert (
            "Agreement needs labels from 2 analysts on the same topics." in agreement.inner_text()
        )
        assert "alpha" not in agreement.inner_text() and "NaN" not in form.inner_text()

        # A category added from the form's editor is chosen at once and stored for the project.
        form.get_by_role("button", name="Edit list").click()
        editor = form.locator(".tmc-category-editor")
        editor.locator("input").fill("harbour")
        editor.get_by_role("button", name="Add").click()
        form.get_by_text("Category 'harbour' is on the list.").wait_for(timeout=30_000)
        category = form.locator(".widget-dropdown:has(label:text-is('Category')) select")
        category.evaluate(  # the status line comes last, but let the select catch up
            "s => new Promise(ok => { const t0 = Date.now(); (function look() {"
            " if (s.options[s.selectedIndex]?.text === 'harbour' || Date.now() - t0 > 10000) ok();"
            " else setTimeout(look, 100); })(); })"
        )
        assert category.evaluate("s => s.options[s.selectedIndex].text") == "harbour"

        # Save the label of topic 2 under "transit": one shared topic, one value, still no alpha.
        form.locator(".widget-text:has(label:text-is('Name')) input").fill("tram fares")
        form.locator(".widget-dropdown:has(label:text-is('Verdict')) select").select_option(
            label="usable"
        )
        category.select_option(label="transit")
        form.get_by_role("button", name="Save label").click()
        form.get_by_text("Saved as version 1.").wait_for(timeout=30_000)
        form.get_by_text("Agreement on categories cannot be computed yet").wait_for(timeout=30_000)
        # A colleague's kernel (here, the test) labels topics 0 and 1 as analyst_a too: the form
        # finds the labels by itself and shows alpha once it can be computed.
        with LabelStore(root / "labels.sqlite", analyst="analyst_a") as other_kernel:
            for topic in (0, 1):
                other_kernel.save(
                    FIT, topic, name=f"mine {topic}", verdict="usable", category="housing"
                )
        form.get_by_text("Krippendorff's alpha for categories is").wait_for(timeout=30_000)
        shown = form.get_by_text("Krippendorff's alpha for categories is").inner_text()

        # Saving again without a change adds no version.
        form.get_by_role("button", name="Save label").click()
        form.get_by_text("No change: version 1 already holds this label.").wait_for(timeout=30_000)

        # Times read locally, with the stored UTC value on hover.
        stamp = form.locator("td[title]").first
        assert re.fullmatch(r"\d{1,2} [A-Z][a-z]{2} \d\d:\d\d", stamp.inner_text().strip())
        assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}Z", stamp.get_attribute("title"))

        # At 1,000 px the name and note inputs are whole and nothing lies on top of them, both
        # with JupyterLab's file browser open (the tables wrap under the form) and closed (the
        # tables sit beside it).
        layouts = {}
        for sidebar in ("open", "closed"):
            if sidebar == "closed":
                page.locator(".jp-Notebook").first.click()
                page.keyboard.press("Escape")
                page.keyboard.press("Control+b")  # JupyterLab: show or hide the left area
                page.wait_for_timeout(1000)
            reading = form.locator(".tmc-label-reading").bounding_box()
            column = form.locator(".tmc-label-form").bounding_box()
            for field in (
                form.locator(".widget-text:has(label:text-is('Name')) input"),
                form.locator(".widget-textarea textarea"),
            ):
                field.scroll_into_view_if_needed()
                assert _covered(page, field) == [], sidebar
                box = field.bounding_box()
                assert box["x"] + box["width"] <= column["x"] + column["width"] + 0.5, sidebar
            beside = reading["x"] >= column["x"] + column["width"] - 0.5
            below = reading["y"] >= column["y"] + column["height"] - 0.5
            assert beside or below, sidebar
            layouts[sidebar] = "beside" if beside else "below"
            form.screenshot(path=str(ARTIFACTS / f"labels-form-1000px-sidebar-{sidebar}.png"))
        assert layouts == {"open": "below", "closed": "beside"}

        # Rename the new category from the form: the store keeps the old name in its history.
        category.select_option(label="harbour")
        editor.locator("input").fill("port")
        editor.get_by_role("button", name="Rename chosen").click()
        form.get_by_text("Renamed 'harbour' to 'port'.").wait_for(timeout=30_000)

    store = LabelStore(root / "labels.sqlite")
    assert store.categories() == ["housing", "transit", "port"]
    assert store.category_aliases()["harbour"] == "port"
    mine = store.history(FIT, 2)
    assert mine[mine["analyst"] == "analyst_a"][
        ["name", "version", "category"]
    ].values.tolist() == [["tram fares", 1, "transit"]]
    # The figure shown is the reference library's alpha (the `krippendorff` package, nominal).
    side = store.side_by_side(FIT, "category")
    codes = side.map({"housing": 0.0, "transit": 1.0}.get).to_numpy(dtype=float).T
    expected = krippendorff.alpha(reliability_data=codes, level_of_measurement="nominal")
    assert f"is {expected:.2f} on 3 topics" in shown and not np.isnan(expected)
    assert [u for u in requests if not LOCAL.match(u)] == []
