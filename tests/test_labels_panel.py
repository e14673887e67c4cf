"""The labelling form without a browser: categories edited from the form, unchanged saves,
agreement states, and times shown locally (the browser test, test_labels_browser.py, checks
what only a browser can). The fit is named by its fingerprint, so no model is fitted."""

from __future__ import annotations

import os
import re
import time

import krippendorff
import numpy as np
import pytest

from tm_compare.labels.agreement import NEEDS_TWO_ANALYSTS
from tm_compare.labels.store import LabelStore
from tm_compare.views._labels_panel import LabelsPanel, agreement_html, local_time

FIT = "quillhaven-k6-s0"


@pytest.fixture
def store(tmp_path):
    with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_a") as opened:
        yield opened


@pytest.fixture
def panel(store):
    form = LabelsPanel(store, FIT, poll_seconds=None)
    form.show_topic(0)
    yield form
    form.close()


def _options(dropdown) -> list[str]:
    return [label for label, _ in dropdown.options]


@pytest.fixture
def zone():
    """Set the process's local time zone for one test (POSIX TZ strings), then restore it."""
    before = os.environ.get("TZ")

    def use(name):
        os.environ["TZ"] = name
        time.tzset()

    yield use
    if before is None:
        os.environ.pop("TZ", None)
    else:
        os.environ["TZ"] = before
    time.tzset()


def test_times_read_locally(zone):
    this_year = time.gmtime().tm_year
    stamp = f"{this_year}-12-02T14:05:07.123456Z"
    zone("UTC0")
    assert local_time(stamp) == "2 Dec 14:05"
    zone("QHT+5")  # a zone five hours behind UTC (POSIX rule; the name is invented)
    assert local_time(stamp) == "2 Dec 09:05"
    assert local_time("2019-01-03T02:00:00.000000Z") == "2 Jan 2019 21:00"  # another year


def test_categories_from_the_form(panel, store):
    panel.category_text.value = "harbour"
    panel.add_category()
    assert store.categories() == ["harbour"] and panel.category.value == "harbour"
    assert "is on the list" in panel.status.value
    panel.category_text.value = "port"
    panel.rename_category()
    assert store.categories() == ["port"] and panel.category.value == "port"
    assert store.category_aliases()["harbour"] == "port"
    panel.category_text.value = "transit"
    panel.add_category()
    panel.category.value = "port"
    panel.retire_category()
    assert _options(panel.category) == ["(none)", "transit"]
    # a retired name typed again is brought back, not refused
    panel.category_text.value = "port"
    panel.add_category()
    assert store.categories() == ["port", "transit"]
    # a clash is reported in the form, nothing changes
    panel.category.value = "transit"
    panel.category_text.value = "harbour"  # a former name of "port"
    panel.rename_category()
    assert "former name" in panel.status.value and store.categories() == ["port", "transit"]


def test_own_label_with_a_former_or_retired_category(panel, store):
    store.define_categories(["crime", "ferries"])
    store.save(FIT, 0, name="courts", category="crime")
    store.save(FIT, 1, name="ferry times", category="ferries")
    store.rename_category("crime", "courts and policing")
    store.retire_category("ferries")
    panel.show_topic(0)
    assert panel.category.value == "courts and policing"  # the category's name today
    panel.show_topic(1)
    assert panel.category.value == "ferries" and "ferries (retired)" in _options(panel.category)
    panel.show_topic(0)
    assert "ferries (retired)" not in _options(panel.category)  # not offered for new labels


def test_saving_an_unchanged_form_adds_nothing(panel, store):
    panel.name.value, panel.verdict.value = "tram fares", "usable"
    panel.save_label()
    assert "Saved as version 1" in panel.status.value
    panel.save_label()
    assert "No change: version 1 already holds this label." in panel.status.value
    assert len(store.history(FIT)) == 1
    panel.note.value = "fares and routes"
    panel.save_label()
    assert "Saved as version 2" in panel.status.value


def test_history_times_carry_the_stored_value(panel, store):
    saved = store.save(FIT, 0, name="tram fares")
    panel.refresh(force=True)
    cell = re.search(r'<td [^>]*title="([^"]+)"[^>]*>([^<]+)</td>', panel.history.value)
    assert cell.group(1) == saved.created_at
    assert cell.group(2) == local_time(saved.created_at)
    assert "created_at" not in panel.history.value and ">saved<" in panel.history.value


def test_agreement_is_a_sentence_until_it_can_be_computed(panel, store):
    colleague = store.as_analyst("analyst_b")
    panel.refresh(force=True)
    assert f"Agreement {NEEDS_TWO_ANALYSTS}." in panel.agreement.value
    store.save(FIT, 0, name="a", verdict="usable")
    colleague.save(FIT, 1, name="b", verdict="usable")
    panel.refresh(force=True)
    assert f"Agreement {NEEDS_TWO_ANALYSTS}." in panel.agreement.value  # no topic in common
    colleague.save(FIT, 0, name="b", verdict="usable")
    panel.refresh(force=True)
    text = panel.agreement.value
    assert "verdicts cannot be computed yet" in text and "nan" not in text.lower()
    assert "On topic 0: 2 analysts" in text
    for topic, (mine, theirs) in enumerate([("usable", "usable"), ("noise", "mixed")], start=1):
        store.save(FIT, topic, name="a", verdict=mine)
        colleague.save(FIT, topic, name="b", verdict=theirs, based_on=1 if topic == 1 else None)
    panel.refresh(force=True)
    # Reference: the `krippendorff` package, nominal (codes: usable 0, mixed 1, noise 2).
    data = np.array([[0, 0, 2], [0, 0, 1]], dtype=float)  # analysts x topics 0-2
    expected = krippendorff.alpha(reliability_data=data, level_of_measurement="nominal")
    assert f"alpha for verdicts is {expected:.2f} on 3 topics" in panel.agreement.value


def test_blind_round_sentence(store):
    assert "Blind round open" in agreement_html(None, 0)


def test_choices_follow_the_store_and_keep_what_was_chosen(panel, store):
    store.define_categories(["housing"])
    panel.name.value, panel.verdict.value = "rents", "usable"
    panel.category_text.value = "transit"
    panel.add_category()  # reloading the lists keeps the verdict chosen before
    assert panel.verdict.value == "usable" and panel.category.value == "transit"
    # a colleague adds a category: the form lists it at its next look, the choice stays
    store.as_analyst("analyst_b").define_categories(["schools"])
    panel.check_for_news()
    assert _options(panel.category) == ["(none)", "housing", "transit", "schools"]
    assert panel.category.value == "transit" and panel.verdict.value == "usable"
