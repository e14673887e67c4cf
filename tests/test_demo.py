"""The invented Quillhaven demo: determinism, planted facts, the fixture, and ``tm-compare demo``.

The planted answers come from the scenario's design (``tm_compare.demo``); each check below
recovers one from the generated rows with an independent, plain computation (regular
expressions, Python sets, ``urllib.parse``) rather than with the package's own tools.
"""

from __future__ import annotations

import re
from pathlib import Path
from urllib.parse import urlsplit

import numpy as np
import pandas as pd
import pytest

from tm_compare.demo import quillhaven as demo
from tm_compare.errors import SettingsError

FIXTURE = Path(__file__).resolve().parents[1] / "fixtures" / "quillhaven_sample.csv"
N = 3000


@pytest.fixture(scope="module")
def planted():
    return demo.scenario(N, random_state=0)


def _body(text: str, truth: demo.DemoTruth) -> str:
    """The article without its outlet's boilerplate lines."""
    boiler = {line for lines in truth.boilerplate.values() for line in lines}
    return "\n".join(line for line in text.split("\n") if line not in boiler)


def _shingles(text: str, k: int = 5) -> set[tuple[str, ...]]:
    # Word k-shingles (Broder 1997, "On the resemblance and containment of documents").
    words = re.findall(r"[a-z0-9']+", text.lower())
    return {tuple(words[i : i + k]) for i in range(len(words) - k + 1)}


def _jaccard(a: set, b: set) -> float:
    return len(a & b) / len(a | b)


# --- determinism and shape -----------------------------------------------------------------------


def test_same_seed_same_data_and_truth_matches_frame(planted):
    frame, truth = planted
    pd.testing.assert_frame_equal(frame, demo.make_frame(N, random_state=0))
    pd.testing.assert_frame_equal(truth.docs, demo.truth(N, random_state=0).docs)
    assert truth.to_dict() == demo.truth(N, random_state=0).to_dict()
    other = demo.make_frame(N, random_state=1)
    assert (other["text"] != frame["text"]).mean() > 0.99
    pd.testing.assert_frame_equal(
        frame[["id", "source", "outlet", "reader", "weight"]],
        truth.docs[["id", "source", "outlet", "reader", "weight"]],
    )


def test_columns_sizes_and_dates(planted):
    frame, truth = planted
    assert list(frame.columns) == [
        "id",
        "source",
        "outlet",
        "reader",
        "weight",
        "date",
        "url",
        "title",
        "text",
    ]
    assert len(frame) == N and frame["id"].is_unique
    assert set(frame["source"]) == {"shared", "visited"}
    assert frame["outlet"].nunique() == 5
    assert frame["reader"].str.fullmatch(r"reader_\d{3,}").all()
    assert (frame["weight"] >= 1).all() and frame["weight"].dtype.kind == "i"
    assert frame["date"].min() >= pd.Timestamp("2024-03-01")
    assert frame["date"].max() <= pd.Timestamp("2024-06-30")
    # "Short news articles": 80-300 words of body (the brief of the demo scenario).
    words = frame["text"].map(lambda t: len(_body(t, truth).split()))
    assert words.between(80, 300).all(), words.describe()
    # Articles are not trivially identical: distinct bodies except planted repeats.
    repeats = sum(map(len, truth.url_variants.values()))
    assert frame["text"].nunique() == N - repeats


def test_bad_arguments_get_clear_errors():
    with pytest.raises(
        SettingsError,
        match=r"The 'n_docs' parameter of demo.scenario must be an "
        r"integer >= 200\. Got 50 instead\..*--docs 200",
    ):
        demo.scenario(50)
    with pytest.raises(SettingsError, match=r"'n_docs' parameter of demo.truth .* Got True"):
        demo.truth(True)
    with pytest.raises(
        SettingsError, match=r"'random_state' parameter .* non-negative integer\. Got -1"
    ):
        demo.make_frame(300, random_state=-1)


# --- planted facts -------------------------------------------------------------------------------


def test_dominant_theme_can_be_read_from_the_words(planted):
    frame, truth = planted
    theme_of = {w: j for j, words in enumerate(truth.theme_words.values()) for w in words}
    counts = np.zeros((len(frame), len(theme_of)), dtype=int)
    for i, text in enumerate(frame["text"]):
        for word in re.findall(r"[a-z]+", text.lower()):
            if word in theme_of:
                counts[i, theme_of[word]] += 1
    guessed = np.array(truth.themes)[counts.argmax(axis=1)]
    strong = truth.docs["theme_share"].to_numpy() >= 0.75
    # With three quarters of its sentences on one theme, that theme's words should win
    # nearly always (planted; 0.95 leaves room for short articles with many generic sentences).
    assert (guessed[strong] == truth.docs["theme"].to_numpy()[strong]).mean() >= 0.95
    assert set(truth.docs["theme"]) == set(truth.themes) and 6 <= len(truth.themes) <= 10


def test_source_heavy_theme_ratio():
    # Planted: SOURCE_HEAVY = housing 3x among shared. On 60,000 rows the binomial standard
    # error of the ratio of dominant-theme shares is about 2.5%, so +-10% is four of them.
    truth = demo.truth(60_000, random_state=2)
    share = truth.docs.groupby("source")["theme"].apply(
        lambda t: (t == truth.source_heavy_theme).mean()
    )
    ratio = share[truth.source_heavy_source] / share.drop(truth.source_heavy_source).iloc[0]
    assert truth.source_heavy_ratio == 3.0
    assert ratio == pytest.approx(3.0, rel=0.10)


def test_source_heavy_theme_shows_in_the_words(planted):
    frame, truth = planted
    pattern = re.compile(r"\b(" + "|".join(truth.theme_words["housing"]) + r")\b", re.I)
    hits = frame["text"].map(lambda t: len(pattern.findall(t)))
    words = frame["text"].map(lambda t: len(t.split()))
    rate = hits.groupby(frame["source"]).sum() / words.groupby(frame["source"]).sum()
    # Housing words per word, shared vs visited: the planted 3x, blurred by second themes and
    # sampling (about 1,200 shared articles); 2.2-4 is wide enough for every seed we tried (0-9: 2.5-3.3).
    assert 2.2 <= rate["shared"] / rate["visited"] <= 4.0


def test_syndicated_copies_are_near_duplicates(planted):
    frame, truth = planted
    by_id = frame.set_index("id")
    for ids in truth.syndicated.values():
        original, *copies = ids
        assert by_id.loc[original, "outlet"] == "Saltreach Wire"
        assert list(by_id.loc[list(ids), "source"]) == ["visited", "visited", "visited", "shared"]
        assert by_id.loc[list(ids), "reader"].nunique() == 1
        assert set(copies[-1:]) <= set(truth.cross_source_copies)
        base = _shingles(_body(by_id.loc[original, "text"], truth))
        for copy in copies:
            text = _body(by_id.loc[copy, "text"], truth)
            assert text != _body(by_id.loc[original, "text"], truth)  # small edits were made
            assert _jaccard(base, _shingles(text)) >= 0.7  # near-duplicate (Broder 1997)
        # An unrelated article on the same theme shares little (templates do not make clones).
        other = truth.docs.query("theme == 'harbour barrier' and role == 'article'")["id"].iloc[0]
        assert _jaccard(base, _shingles(_body(by_id.loc[other, "text"], truth))) < 0.2


def test_boilerplate_lines_on_most_articles_of_their_outlet(planted):
    frame, truth = planted
    lines = frame["text"].str.split("\n")
    for outlet, boiler in truth.boilerplate.items():
        mine = frame["outlet"] == outlet
        assert len(boiler) >= 2
        for line in boiler:
            present = lines.map(lambda ls, line=line: line in ls)
            assert present[mine].mean() >= 0.7, (outlet, line)  # planted shares 0.8-0.95
            assert not present[~mine].any()


def test_heavy_reader(planted):
    frame, truth = planted
    visited = frame[frame["source"] == "visited"]
    per_reader = visited.groupby(["reader", "outlet"])["weight"].sum().sort_values()
    assert per_reader.index[-1] == (truth.heavy_reader, truth.heavy_outlet)
    assert per_reader.iloc[-1] == truth.heavy_visits >= 2000  # "thousands of times"
    assert per_reader.iloc[-1] > 10 * per_reader.iloc[-2]
    assert truth.heavy_visits / visited["weight"].sum() > 0.3


def test_url_variants_repeat_an_article_in_the_same_source(planted):
    frame, truth = planted
    by_id = frame.set_index("id")
    assert len(truth.url_variants) >= 3
    for original, variants in truth.url_variants.items():
        row = by_id.loc[original]
        base = urlsplit(row["url"])
        for variant in variants:
            other = by_id.loc[variant]
            assert other[["source", "reader", "title", "text"]].equals(
                row[["source", "reader", "title", "text"]]
            )
            parts = urlsplit(other["url"])
            assert other["url"] != row["url"]
            # Same page once "www." and the tracking query/fragment are set aside (RFC 3986).
            assert (parts.netloc.removeprefix("www."), parts.path) == (base.netloc, base.path)
            assert parts.fragment or re.search(r"(utm_\w+|fbclid|gclid)=", parts.query)


def test_intake_merges_the_url_variants(planted):
    from tm_compare import Corpus

    frame, truth = planted
    corpus = Corpus.from_frame(frame, **demo.CORPUS_COLUMNS)
    n_variants = sum(map(len, truth.url_variants.values()))
    assert len(corpus) == N - n_variants
    assert corpus.report.input_rows == N
    assert "outlet" in corpus.frame.columns


def test_no_real_names_in_addresses(planted):
    frame, truth = planted
    hosts = frame["url"].map(lambda u: urlsplit(u).hostname)
    # RFC 2606 section 3 reserves ".example" for documentation and examples.
    assert hosts.str.endswith(".example").all()
    assert not frame["text"].str.contains(r"https?://|www\.|@", regex=True).any()


# --- the stored sample ---------------------------------------------------------------------------


def test_fixture_equals_what_the_generator_writes():
    assert FIXTURE.read_text(encoding="utf-8") == demo.sample_csv(), (
        "fixtures/quillhaven_sample.csv is out of date; regenerate it (see fixtures/README.md)."
    )
    assert 300 <= demo.SAMPLE["n_docs"] <= 400


# --- preparation of the demo ---------------------------------------------------------------------


@pytest.fixture(scope="module")
def prepared_demo():
    from tm_compare import prepare

    truth = demo.truth(400, random_state=4)
    return truth, prepare(demo.make_corpus(400, random_state=4))


@pytest.mark.slow
def test_preparation_removes_the_boilerplate(prepared_demo):
    truth, prepared = prepared_demo
    found = prepared.boilerplate.groupby("group")["line"].apply(set).to_dict()
    assert found == {outlet: set(lines) for outlet, lines in truth.boilerplate.items()}
    texts = prepared.meta["text"].str.split("\n")
    for lines in truth.boilerplate.values():
        for line in lines:
            assert not texts.map(lambda ls, line=line: line in ls).any()


@pytest.mark.slow
def test_preparation_merges_syndicated_copies_within_a_source(prepared_demo):
    truth, prepared = prepared_demo
    meta = prepared.meta.set_index("id")
    for ids in truth.syndicated.values():
        original, courier, tabloid, blog = ids
        kept = [i for i in (original, courier, tabloid) if i in meta.index]
        assert len(kept) == 1  # the three visited copies are one document now
        assert set(meta.loc[kept[0], "duplicate_ids"]) == {original, courier, tabloid} - set(kept)
        assert meta.loc[kept[0], "cross_source_duplicate"]
        assert blog in meta.index and meta.loc[blog, "cross_source_duplicate"]
    assert meta["cross_source_duplicate"].sum() == 2 * len(truth.syndicated)


# --- the whole demo job ---------------------------------------------------------------------------


@pytest.mark.slow
def test_run_demo_runs_every_step_and_stores_the_planted_facts(tmp_path):
    import json

    from tm_compare.demo.run import STEPS, run_demo

    seen = []
    run = run_demo(
        tmp_path / "p", n_docs=300, random_state=2, echo=lambda title, text: seen.append(title)
    )
    assert seen == [title for title, _ in STEPS]
    assert run.prepared is not None and len(run.prepared) < len(run.corpus) < 300
    stored = json.loads((tmp_path / "p" / "demo" / "truth.json").read_text(encoding="utf-8"))
    assert stored["heavy_reader"] == demo.truth(300, 2).heavy_reader
    assert run.project.manifest["settings"]["demo"] == {"n_docs": 300, "random_state": 2}


# --- the command line ----------------------------------------------------------------------------


@pytest.fixture
def main(monkeypatch):
    """The real ``tm-compare`` entry point, with only this command registered (so that
    these tests do not depend on the other commands)."""
    from tm_compare import cli

    monkeypatch.setattr(cli, "COMMANDS", ("demo",))
    return cli.main


@pytest.mark.slow
def test_cli_demo_builds_and_prepares_a_project(tmp_path, capsys, main):
    project = tmp_path / "qh"
    fast = ["--k", "4,6", "--seeds", "2", "--passes", "2", "--n-boot", "100", "--no-progress"]
    args = ["demo", "--project", str(project), "--docs", "300", "--random-state", "1", *fast]
    assert main(args) == 0
    out = capsys.readouterr().out
    for expected in (
        "] Corpus intake",
        "300 invented articles",
        "] Preparation",
        "Boilerplate lines removed:",
        "accept our cookie policy",
        "near-duplicate merged",
        f"Project folder: {project}",
    ):
        assert expected in out
    assert (project / "manifest.json").exists() and (project / "corpus.parquet").exists()
    stored = pd.read_csv(project / "demo" / "quillhaven.csv")
    assert len(stored) == 300 and stored["id"].tolist() == demo.make_frame(300, 1)["id"].tolist()
    # A second run reuses the project and its cached preparation.
    assert main(args) == 0
    assert "from the project's cache" in capsys.readouterr().out


def test_cli_demo_refuses_a_tiny_corpus_without_making_a_folder(tmp_path, capsys, main):
    project = tmp_path / "tiny"
    assert main(["demo", "--project", str(project), "--docs", "50"]) == 1
    err = capsys.readouterr().err
    assert "Error: The 'n_docs' parameter of run_demo must be an integer >= 200. Got 50" in err
    assert not project.exists()
