"""Corpus intake: file formats, column checks, merging of duplicates, and the intake report.

Expected counts and weights are worked out by hand from the invented fixture
(fixtures/intake/quillhaven_articles.csv); the intake rules themselves (what merges,
what is dropped and counted) are common practice for de-duplicating news links.
Reference libraries: pandas reads each format for the cross-format check, Python's
codecs give the byte values (RFC 3629 defines which bytes are valid UTF-8).
"""

from __future__ import annotations

import gzip
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tm_compare import Corpus, canonical_url
from tm_compare.errors import CorpusError, SettingsError
from tm_compare.text.removals import RemovalLog

FIXTURE = Path(__file__).resolve().parents[1] / "fixtures" / "intake" / "quillhaven_articles.csv"
COLUMNS = dict(
    text="body",
    source="stream",
    id="article_id",
    weight="visits",
    group="reader",
    url="link",
    date="published",
    title="headline",
)


def fixture_frame() -> pd.DataFrame:
    return pd.read_csv(FIXTURE, dtype={"article_id": "str"})


def accounted(corpus: Corpus) -> int:
    log = corpus.report
    return len(corpus) + log.total("intake", "removed") + log.total("intake", "merged")


# ---------------------------------------------------------------- the invented fixture


def test_fixture_intake_counts_every_row():
    corpus = Corpus.read(FIXTURE, **COLUMNS)
    log = corpus.report
    # The fixture's 8 rows, worked out by hand: q001 twice (same id, same reader), q003 has
    # no text, q004/q005 are one page reached through two links, q002 is in both sources.
    assert log.input_rows == 8
    assert len(corpus) == 5
    assert log.total("intake", "removed") == 1
    assert log.total("intake", "merged") == 2
    assert accounted(corpus) == log.input_rows == log.accounted_rows("intake")
    frame = corpus.frame.set_index("id")
    assert frame.loc["q001", "weight"] == 3.0  # 1 + 2 visits merged
    assert frame.loc["q004", "weight"] == 7.0  # 5 + 2 visits merged by canonical URL
    assert frame.loc["q004", "duplicate_ids"] == ["q005"]
    # q004's date ("last Tuesday") is unreadable; its merged copy q005 supplies one.
    assert frame.loc["q004", "date"] == pd.Timestamp("2026-03-05")
    assert (
        frame.loc["q004", "canonical_url"]
        == "https://quillhaven-ledger.example/market/lantern-hours?a=1&b=2"
    )
    # The same id in two sources stays two documents, each with a unique id.
    assert {"q002@shared", "q002@visited"} <= set(frame.index)
    assert frame["outlet"].tolist().count("Quillhaven Ledger") == 3  # extra column kept
    assert corpus.sources == ["shared", "visited"]


def test_report_prints_reasons_per_source():
    corpus = Corpus.read(FIXTURE, **COLUMNS)
    text = str(corpus.report)
    assert "8 input rows" in text
    assert "intake: 5 documents kept; removed 1, merged 2, flagged 2" in text
    table = corpus.report.to_frame().set_index(["reason", "source"])["count"]
    assert table[("empty or missing text", "shared")] == 1
    assert table[("merged: same id", "shared")] == 1
    assert table[("merged: same canonical URL", "visited")] == 1
    assert table[("unreadable date (kept, date missing)", "visited")] == 1
    assert table[("URL not absolute (kept, not used for merging)", "visited")] == 1
    assert "<table" in corpus.report._repr_html_()


def test_summary_per_source():
    summary = Corpus.read(FIXTURE, **COLUMNS).summary()
    assert summary.loc["shared", ["rows_read", "documents", "removed", "merged"]].tolist() == [
        4,
        2,
        1,
        1,
    ]
    assert summary.loc["visited", "exposure"] == 12.0  # 7 + 4 + 1
    assert summary["rows_read"].sum() == 8


def test_canonical_columns_and_types():
    frame = Corpus.read(FIXTURE, **COLUMNS).frame
    assert list(frame.columns[:10]) == [
        "id",
        "text",
        "source",
        "weight",
        "group",
        "url",
        "canonical_url",
        "title",
        "date",
        "duplicate_ids",
    ]
    assert frame["id"].is_unique
    assert frame["weight"].dtype == float
    assert pd.api.types.is_datetime64_any_dtype(frame["date"])
    # "2026-03-04T08:30:00+01:00" is stored as naive UTC.
    assert pd.Timestamp("2026-03-04 07:30") in set(frame["date"])


# ---------------------------------------------------------------- file formats


def _write(frame: pd.DataFrame, path: Path) -> Path:
    name = path.name
    if ".csv" in name or name.endswith(".txt"):
        frame.to_csv(path, index=False)
    elif ".tsv" in name:
        frame.to_csv(path, index=False, sep="\t")
    elif ".parquet" in name or name.endswith(".pq"):
        frame.to_parquet(path, index=False)
    else:
        frame.to_json(path, orient="records", lines=True)
    return path


@pytest.mark.parametrize(
    ("name", "fmt"),
    [
        ("a.csv", None),
        ("a.csv.gz", None),
        ("a.tsv", None),
        ("a.parquet", None),
        ("a.pq", None),
        ("a.jsonl", None),
        ("a.ndjson.gz", None),
        ("a.json", "jsonl"),
        ("a.txt", "csv"),
        ("a.jsonl", "jsonl"),
    ],
)
def test_each_format_gives_the_same_corpus(tmp_path, name, fmt):
    reference = Corpus.read(FIXTURE, **COLUMNS)
    path = _write(fixture_frame(), tmp_path / name)
    corpus = Corpus.read(path, format=fmt, **COLUMNS)
    assert corpus.fingerprint == reference.fingerprint
    assert corpus.settings["file"]["name"] == name


def test_from_frame_matches_read():
    assert (
        Corpus.from_frame(fixture_frame(), **COLUMNS).fingerprint
        == Corpus.read(FIXTURE, **COLUMNS).fingerprint
    )


def test_csv_ids_keep_leading_zeros(tmp_path):
    path = tmp_path / "ids.csv"
    path.write_text("id,text,source\n007,Quill tide tables,archive\n010,Harbour notes,archive\n")
    assert Corpus.read(path).frame["id"].tolist() == ["007", "010"]


def test_defaults_and_role_named_columns():
    df = pd.DataFrame(
        {
            "text": ["Harbour wall repaired", "Tram line extended"],
            "source": ["archive", "archive"],
            "url": ["https://a.example/1", None],
        }
    )
    corpus = Corpus.from_frame(df)
    assert corpus.frame["weight"].tolist() == [1.0, 1.0]
    assert corpus.frame["group"].isna().all()
    assert corpus.frame["id"].tolist() == ["doc0", "doc1"]
    assert corpus.frame["canonical_url"].iloc[0] == "https://a.example/1"  # 'url' picked by name
    assert Corpus.from_frame(df, url=False).frame["url"].isna().all()  # False ignores it


def test_unknown_suffix_and_missing_file(tmp_path):
    odd = tmp_path / "articles.xlsx"
    odd.write_text("x")
    with pytest.raises(CorpusError, match=r"Cannot tell the format of .*articles.xlsx.*format="):
        Corpus.read(odd)
    with pytest.raises(CorpusError, match=r"nowhere.csv' does not exist"):
        Corpus.read(tmp_path / "nowhere.csv")
    with pytest.raises(
        SettingsError, match=r"The 'format' parameter of Corpus.read must be one of"
    ):
        Corpus.read(FIXTURE, format="excel")


def test_malformed_json_line_is_named(tmp_path):
    path = tmp_path / "a.jsonl"
    path.write_text('{"text": "Ferry news", "source": "s"}\n{"text": "broken\n')
    with pytest.raises(CorpusError, match=r"Line 2 of .*a.jsonl' is not valid JSON"):
        Corpus.read(path)


# ---------------------------------------------------------------- bad input


def test_missing_column_lists_present_columns():
    with pytest.raises(CorpusError) as info:
        Corpus.from_frame(fixture_frame(), **{**COLUMNS, "text": "bodyy"})
    msg = str(info.value)
    assert "The text column 'bodyy' is not in the data frame." in msg
    assert "Columns present: article_id, body, stream" in msg
    assert "Did you mean 'body'?" in msg


def test_missing_column_names_the_file():
    with pytest.raises(
        CorpusError,
        match=r"The weight column 'clicks' is not in the file '.*quillhaven_articles.csv'",
    ):
        Corpus.read(FIXTURE, **{**COLUMNS, "weight": "clicks"})


def test_text_column_of_numbers_is_refused():
    df = pd.DataFrame({"n": [1, 2], "source": ["a", "a"]})
    with pytest.raises(
        CorpusError,
        match=r"The text column 'n' of the data frame holds numbers \(int64\); text is expected",
    ):
        Corpus.from_frame(df, text="n")


def test_text_of_wrong_type_names_rows(tmp_path):
    path = tmp_path / "a.jsonl"
    path.write_text(
        '{"id": "k1", "text": "Quay repairs", "source": "s"}\n'
        '{"id": "k2", "text": {"lead": "x"}, "source": "s"}\n'
    )
    with pytest.raises(
        CorpusError,
        match=r"The text column 'text' of the file .* must hold strings; rows k2 \(\{'lead': 'x'\}\) hold dict",
    ):
        Corpus.read(path)


def test_empty_text_is_a_counted_drop_per_source():
    df = pd.DataFrame(
        {"text": ["Quay repairs", "", None, "   ", np.nan], "source": ["a", "a", "b", "b", "b"]}
    )
    corpus = Corpus.from_frame(df)
    assert len(corpus) == 1
    table = corpus.report.to_frame().set_index(["reason", "source"])["count"]
    assert table[("empty or missing text", "a")] == 1
    assert table[("empty or missing text", "b")] == 3
    assert accounted(corpus) == 5


def test_all_rows_empty_is_an_error():
    with pytest.raises(
        CorpusError, match=r"No documents left in the data frame: every row was removed"
    ):
        Corpus.from_frame(pd.DataFrame({"text": ["", None], "source": ["a", "a"]}))
    with pytest.raises(CorpusError, match=r"has no rows"):
        Corpus.from_frame(pd.DataFrame({"text": [], "source": []}))


def _cp1252_file(path: Path) -> Path:
    # Line 3 holds "café" encoded as cp1252, where "é" is byte 0xe9 (Python's cp1252 codec);
    # 0xe9 starts a three-byte sequence in UTF-8 (RFC 3629), and " " cannot continue it.
    head = b"id,text,source\nk1,Quay repairs,a\n"
    data = head + "k2,Harbour caf\u00e9 opens,a\n".encode("cp1252")
    opener = gzip.open if path.suffix == ".gz" else open
    with opener(path, "wb") as fh:
        fh.write(data)
    return path


@pytest.mark.parametrize("name", ["latin.csv", "latin.csv.gz"])
def test_non_utf8_file_names_file_offset_and_fix(tmp_path, name):
    path = _cp1252_file(tmp_path / name)
    offset = len(b"id,text,source\nk1,Quay repairs,a\nk2,Harbour caf")
    with pytest.raises(CorpusError) as info:
        Corpus.read(path)
    msg = str(info.value)
    assert f"The file '{path}' is not valid utf-8: byte 0xe9 at offset {offset} (line 3)" in msg
    assert "encoding='cp1252'" in msg
    assert Corpus.read(path, encoding="cp1252").frame["text"].iloc[1] == "Harbour caf\u00e9 opens"


def test_non_utf8_jsonl_file(tmp_path):
    path = tmp_path / "a.jsonl"
    first, second = b'{"text": "Quay", "source": "a"}\n', b'{"text": "caf\xe9", "source": "a"}\n'
    path.write_bytes(first + second)
    offset = len(first) + second.index(b"\xe9")
    with pytest.raises(CorpusError, match=rf"byte 0xe9 at offset {offset} \(line 2\)"):
        Corpus.read(path)


def test_non_utf8_bytes_in_a_frame():
    df = pd.DataFrame({"text": [b"Quay", b"caf\xe9"], "source": ["a", "a"]})
    with pytest.raises(
        CorpusError, match=r"holds bytes that are not valid UTF-8 \(byte 0xe9 at offset 3"
    ):
        Corpus.from_frame(df)
    ok = pd.DataFrame({"text": [b"Quay", "caf\u00e9".encode()], "source": ["a", "a"]})
    assert Corpus.from_frame(ok).frame["text"].tolist() == ["Quay", "caf\u00e9"]


@pytest.mark.parametrize(
    ("weights", "what", "shown"),
    [
        ([1, -2, 3], "1 negative", "k2 (-2)"),
        (["1", "many", "2"], "1 non-numeric", "k2 ('many')"),
        ([1.0, None, 2.0], "1 missing", "k2 (nan)"),
        ([1.0, float("inf"), 2.0], "1 infinite", "k2 (inf)"),
    ],
)
def test_bad_weights_name_column_rows_and_values(weights, what, shown):
    df = pd.DataFrame(
        {"text": ["a b", "c d", "e f"], "source": "s", "key": ["k1", "k2", "k3"], "visits": weights}
    )
    with pytest.raises(CorpusError) as info:
        Corpus.from_frame(df, id="key", weight="visits")
    msg = str(info.value)
    assert (
        f"The weight column 'visits' of the data frame has {what} value(s) in rows {shown}" in msg
    )
    assert "pass weight=None" in msg


def test_zero_weight_is_accepted():
    df = pd.DataFrame({"text": ["a"], "source": ["s"], "weight": [0]})
    assert Corpus.from_frame(df).frame["weight"].tolist() == [0.0]


def test_missing_ids_and_sources_are_errors():
    df = pd.DataFrame({"text": ["a", "b"], "source": ["s", None], "key": ["k1", None]})
    with pytest.raises(
        CorpusError, match=r"The id column 'key' of the data frame is empty in 1 row\(s\): row 1"
    ):
        Corpus.from_frame(df, id="key")
    with pytest.raises(
        CorpusError, match=r"The source column 'source' .* is empty in 1 row\(s\): doc1"
    ):
        Corpus.from_frame(df)


def test_unused_column_named_like_a_role_is_not_overwritten():
    df = pd.DataFrame({"body": ["a"], "text": ["summary"], "source": ["s"]})
    with pytest.raises(CorpusError, match=r"has columns named \['text'\] that are not used"):
        Corpus.from_frame(df, text="body")


def test_bad_options_are_refused():
    with pytest.raises(
        SettingsError, match=r"The 'on_conflict' parameter of Corpus.from_frame must be one of"
    ):
        Corpus.from_frame(fixture_frame(), **COLUMNS, on_conflict="newest")
    with pytest.raises(
        SettingsError, match=r"The 'df' parameter of Corpus.from_frame must be a pandas DataFrame"
    ):
        Corpus.from_frame([{"text": "a", "source": "s"}])


# ---------------------------------------------------------------- duplicates


def _dupes(texts, sources=("s", "s", "s")):
    return pd.DataFrame(
        {"key": ["k1", "k1", "k2"], "text": list(texts), "source": list(sources), "w": [1, 2, 4]}
    )


def test_same_id_different_text_is_an_error_naming_the_ids():
    df = _dupes(["Tram fares frozen", "Tram fares raised", "Gulls nest on the pier"])
    with pytest.raises(CorpusError) as info:
        Corpus.from_frame(df, id="key", weight="w")
    msg = str(info.value)
    assert "1 id(s) of the data frame have different texts within the same source" in msg
    assert "'k1' in source 's': 'Tram fares frozen' vs 'Tram fares raised'" in msg
    assert "on_conflict='first'" in msg


@pytest.mark.parametrize(
    ("rule", "kept"), [("first", "Tram fares frozen"), ("longest", "Tram fares raised again")]
)
def test_conflict_rules_merge_and_add_weights(rule, kept):
    df = _dupes(["Tram fares frozen", "Tram fares raised again", "Gulls nest on the pier"])
    corpus = Corpus.from_frame(df, id="key", weight="w", on_conflict=rule)
    frame = corpus.frame.set_index("id")
    assert frame.loc["k1", "text"] == kept
    assert frame.loc["k1", "weight"] == 3.0
    assert accounted(corpus) == 3


def test_whitespace_differences_are_not_a_conflict():
    df = _dupes(["Tram fares  frozen\n", "Tram fares frozen", "Gulls"])
    corpus = Corpus.from_frame(df, id="key", weight="w")
    assert len(corpus) == 2 and corpus.report.total("intake", "merged") == 1


def test_same_id_in_two_sources_stays_two_documents():
    df = _dupes(
        ["Tram fares frozen", "Tram fares raised", "Gulls"], sources=("shared", "visited", "shared")
    )
    corpus = Corpus.from_frame(df, id="key", weight="w")
    assert sorted(corpus.frame["id"]) == ["k1@shared", "k1@visited", "k2"]


def test_same_url_for_two_readers_stays_two_documents():
    df = pd.DataFrame(
        {
            "text": ["Pier reopens"] * 3,
            "source": "visited",
            "reader": ["r1", "r2", "r1"],
            "url": [
                "https://a.example/pier",
                "https://a.example/pier/",
                "https://www.a.example/pier#x",
            ],
            "weight": [1, 2, 4],
        }
    )
    corpus = Corpus.from_frame(df, group="reader")
    # Exposure stays attached to the reader who produced it (later clustered by group).
    assert corpus.frame.set_index("group")["weight"].to_dict() == {"r1": 5.0, "r2": 2.0}
    assert corpus.report.to_frame()["reason"].tolist() == ["merged: same canonical URL"]


def test_empty_duplicate_row_gives_its_weight_to_the_article():
    df = pd.DataFrame(
        {"id": ["k1", "k1"], "text": [None, "Quay repairs"], "source": "s", "weight": [3, 1]}
    )
    corpus = Corpus.from_frame(df)
    assert corpus.frame["weight"].tolist() == [4.0]
    assert (
        corpus.report.total("intake", "merged") == 1
        and corpus.report.total("intake", "removed") == 0
    )


def test_tracking_params_option_changes_merging():
    df = pd.DataFrame(
        {
            "text": ["a", "a"],
            "source": "s",
            "url": ["https://e.example/x?ref=1", "https://e.example/x?ref=2"],
        }
    )
    assert len(Corpus.from_frame(df)) == 2
    assert len(Corpus.from_frame(df, tracking_params=["ref"])) == 1


# ---------------------------------------------------------------- dates and fingerprint


def test_dates_parse_and_unreadable_dates_are_flagged():
    df = pd.DataFrame(
        {
            "text": list("abcd"),
            "source": "s",
            "date": ["2026-03-05", "2026-03-05T10:00:00+02:00", "soon", None],
        }
    )
    corpus = Corpus.from_frame(df)
    dates = corpus.frame["date"]
    assert dates.iloc[0] == pd.Timestamp("2026-03-05")
    assert dates.iloc[1] == pd.Timestamp("2026-03-05 08:00")
    assert dates.iloc[2:].isna().all()
    assert len(corpus) == 4  # an unreadable date is no reason to drop an article
    assert corpus.report.total("intake", "flagged") == 1  # the missing date is not counted


def test_date_format_option():
    df = pd.DataFrame({"text": ["a"], "source": "s", "date": ["05/03/2026"]})
    parsed = Corpus.from_frame(df, date_format="%d/%m/%Y").frame["date"].iloc[0]
    assert parsed == pd.Timestamp("2026-03-05")


def test_fingerprint_follows_content():
    df = fixture_frame()
    first = Corpus.from_frame(df, **COLUMNS).fingerprint
    assert Corpus.from_frame(df.copy(), **COLUMNS).fingerprint == first
    changed = df.copy()
    changed.loc[0, "visits"] = 9
    assert Corpus.from_frame(changed, **COLUMNS).fingerprint != first
    changed = df.copy()
    changed.loc[7, "outlet"] = "Quillhaven Tidings"
    assert Corpus.from_frame(changed, **COLUMNS).fingerprint != first


@pytest.mark.slow
def test_fingerprint_is_the_same_in_another_process():
    # A project reopened later (or by a collaborator) must see the same fingerprint; Python's
    # salted str hash differs between processes, so a fresh interpreter with another seed checks it.
    code = (
        "import sys, json; from tm_compare import Corpus; "
        "print(Corpus.read(sys.argv[1], **json.loads(sys.argv[2])).fingerprint)"
    )
    env = {**os.environ, "PYTHONHASHSEED": "12345"}
    result = subprocess.run(
        [sys.executable, "-c", code, str(FIXTURE), json.dumps(COLUMNS)],
        capture_output=True,
        text=True,
        env=env,
        check=True,
        timeout=120,
    )
    assert result.stdout.strip() == Corpus.read(FIXTURE, **COLUMNS).fingerprint


# ---------------------------------------------------------------- no silent drops


_rows = st.lists(
    st.tuples(
        st.sampled_from(["k1", "k2", "k3", "k4"]),
        st.sampled_from(["Quay repairs", "Tram fares", "", None, "  "]),
        st.sampled_from(["shared", "visited"]),
        st.sampled_from(["r1", "r2", None]),
        st.sampled_from(
            [
                "https://a.example/1",
                "https://www.a.example/1/",
                "https://a.example/2",
                "not a url",
                None,
            ]
        ),
        st.integers(0, 5),
    ),
    min_size=1,
    max_size=30,
)


@pytest.mark.slow
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rows=_rows)
def test_every_input_row_is_accounted_for(rows):
    df = pd.DataFrame(rows, columns=["id", "text", "source", "group", "url", "weight"])
    try:
        corpus = Corpus.from_frame(df, on_conflict="first")
    except CorpusError as exc:
        assert "No documents left" in str(exc)
        return
    assert accounted(corpus) == len(df) == corpus.report.input_rows
    assert corpus.frame["id"].is_unique
    # A plain union-find over the merge keys, as a reference for the sparse-graph version.
    parent = list(range(len(df)))

    def root(i):
        while parent[i] != i:
            i = parent[i]
        return i

    seen = {}
    for i, (doc_id, _, source, group, url, _) in enumerate(rows):
        canon = canonical_url(url) if url and url.startswith("https") else None
        for key in (("id", source, group, doc_id), ("url", source, group, canon)):
            if key[-1] is None:
                continue
            if key in seen:
                parent[root(i)] = root(seen[key])
            seen.setdefault(key, i)
    has_text = (df["text"].fillna("").str.strip() != "").to_numpy()
    components = (
        pd.DataFrame(
            {"root": [root(i) for i in range(len(df))], "w": df["weight"], "text": has_text}
        )
        .groupby("root")
        .agg(w=("w", "sum"), text=("text", "any"))
    )
    expected = sorted(components.loc[components["text"], "w"].astype(float))
    assert sorted(corpus.frame["weight"]) == expected  # merged weights are the sums


def test_a_corpus_frame_reads_back_unchanged():
    # Filtering corpus.frame and building a corpus again is a natural notebook step.
    corpus = Corpus.read(FIXTURE, **COLUMNS)
    again = Corpus.from_frame(corpus.frame)
    assert again.fingerprint == corpus.fingerprint
    assert again.report.input_rows == len(corpus) and again.report.total() == 0


def test_removal_log_kinds_and_round_trip():
    log = RemovalLog(input_rows=10)
    log.add("intake", "merged: same id", "s", 2)  # the kind follows the reason by default
    log.add("intake", "empty or missing text", "s", 3)
    log.add("intake", "unreadable date (kept, date missing)", "s", 4, kind="flagged")
    log.kept["intake"] = 5
    assert (log.total("intake", "merged"), log.total("intake", "removed"), log.total()) == (2, 3, 5)
    assert log.accounted_rows("intake") == 10  # flagged rows are not counted twice
    assert RemovalLog.from_dict(log.to_dict()).to_dict() == log.to_dict()
    old = RemovalLog.from_dict(
        {
            "input_rows": 1,
            "entries": [
                {"stage": "intake", "reason": "x", "source": "s", "count": 1, "example": ""}
            ],
        }
    )
    assert old.total() == 1 and old.to_frame()["kind"].tolist() == ["removed"]
    with pytest.raises(
        SettingsError, match=r"The 'kind' parameter of RemovalLog.add must be one of"
    ):
        log.add("intake", "x", "s", 1, kind="lost")


def test_ids_are_unique_even_when_given_ids_look_qualified():
    # "k1" in source a becomes "k1@a", which source b already uses as a plain id.
    df = pd.DataFrame(
        {"id": ["k1", "k1", "k1@a"], "text": ["w", "x", "y"], "source": ["a", "b", "b"]}
    )
    corpus = Corpus.from_frame(df)
    assert corpus.frame["id"].is_unique and len(corpus) == 3


@pytest.mark.parametrize("chunk", [1, 2, 3, 5, 1 << 20])
def test_bad_byte_is_located_across_read_chunks(tmp_path, chunk):
    from tm_compare.text._intake import _first_bad_byte

    # Two-byte UTF-8 characters straddle chunk boundaries; the bad byte is 0xff on line 3.
    data = "caf\u00e9\nna\u00efve\n".encode() + b"ok \xff\n"
    path = tmp_path / "a.csv"
    path.write_bytes(data)
    assert _first_bad_byte(path, "utf-8", chunk=chunk) == (data.index(b"\xff"), 3, 0xFF)


def test_metadata_columns_travel_with_their_types_through_preparation(tmp_path):
    from tm_compare.demo.quillhaven import CORPUS_COLUMNS, make_frame
    from tm_compare.project import Project
    from tm_compare.text.corpus import load_corpus, save_corpus
    from tm_compare.text.prepared import load_prepared, prepare

    frame = make_frame(240).set_index("id", drop=False)  # an index that is not 0..n-1
    kinds = pd.CategoricalDtype(["tabloid", "daily", "bulletin"], ordered=True)
    frame["outlet_type"] = pd.Categorical(
        np.where(frame["outlet"] == "The Gullcry", "tabloid", "daily"), dtype=kinds
    )
    frame["age"] = pd.array([pd.NA if i % 7 == 0 else 20 + i % 50 for i in range(240)], "Int64")
    frame["seen_at"] = pd.date_range("2024-03-01", periods=240, freq="h", tz="Europe/Berlin")
    frame["wave"] = 2
    extra = ["outlet_type", "age", "seen_at", "wave"]
    corpus = Corpus.from_frame(frame, **CORPUS_COLUMNS)
    # Kept as given: a category keeps its levels and their order (a formula's reference level),
    # a nullable integer its missing values, a time stamp its zone (pandas dtypes compared).
    assert corpus.frame[extra].dtypes.tolist() == frame[extra].dtypes.tolist()
    project = Project.create(tmp_path / "p")
    save_corpus(corpus, project)
    assert load_corpus(project).frame[extra].dtypes.tolist() == frame[extra].dtypes.tolist()
    prepared = prepare(corpus, project=project, progress=False)
    for meta in (prepared.meta, load_prepared(project).meta):
        assert meta[extra].dtypes.tolist() == frame[extra].dtypes.tolist()
        given = frame.loc[meta["id"]]
        # Every document keeps its own values (ids matched; merged copies fill only gaps).
        same = [g == m for g, m in zip(given["outlet_type"], meta["outlet_type"], strict=True)]
        assert all(same) and (given["wave"].to_numpy() == meta["wave"].to_numpy()).all()
        assert (given["seen_at"].to_numpy() == meta["seen_at"].to_numpy()).all()
    # Read from a CSV, as `tm-compare prepare` does: every column beyond the roles travels.
    frame.drop(columns=["seen_at"]).to_csv(tmp_path / "c.csv", index=False)
    read = prepare(Corpus.read(tmp_path / "c.csv", **CORPUS_COLUMNS), progress=False)
    assert {"outlet", "outlet_type", "age", "wave"} <= set(read.meta.columns)
