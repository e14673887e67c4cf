"""The invented demo scenario: the coastal city of Quillhaven argues about its tidal barrier.

Quillhaven, its outlets and its readers do not exist. A panel of readers
(``reader_017``, ...) is observed through two sources: ``"shared"`` (articles
they shared on social platforms) and ``"visited"`` (articles they opened
while browsing), with exposure counts as weights. Five outlets write about
nine themes; each article mixes one dominant theme with at most one other.

Planted facts that later stages should find (all listed in :class:`DemoTruth`):

1. ``housing`` is three times as common among shared articles as among
   visited ones (same share of articles, by dominant theme).
2. A syndicated story: the wire service's article is republished with small
   edits by two outlets in the same source and by a third in the other source.
3. Every outlet appends boilerplate lines (cookie notices, newsletter and
   share prompts) to most of its articles.
4. One reader visits one outlet thousands of times.
5. A few articles appear again in the same source under URL variants
   (tracking parameters, ``www.``, fragments), so intake has rows to merge.
6. ``arts festival`` rises among shared articles from March to June: a shared
   article of another theme (not housing or storms) turns into a festival
   article with a chance growing linearly from 0 on the first day to
   ``TREND[2]`` on the last (:meth:`DemoTruth.trend` gives the expected share).

Everything is drawn from ``numpy.random.Generator`` streams seeded by
``random_state``: the same arguments give the same data on every run.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .._deprecation import renamed_parameters
from .._validation import check_limit, param_error
from ._text import LANGUAGES, OUTLETS, THEMES, WIRE, material, render, urls

__all__ = [
    "DemoTruth",
    "make_corpus",
    "make_frame",
    "sample_csv",
    "scenario",
    "truth",
    "THEME_NAMES",
]

SOURCES = ("shared", "visited")
THEME_NAMES = tuple(THEMES)
OUTLET_NAMES = tuple(OUTLETS)
MIN_DOCS = 200
#: ``language`` of the demo: one of the languages it is written in, or "de+en": each article
#: in German or English (half each, by a seeded draw; copies and URL variants follow their
#: original), for trying ``prepare(language="auto")``.
DEMO_LANGUAGES = (*LANGUAGES, "de+en")

SHARED_FRACTION = 0.4
# Share of each theme among visited articles (by dominant theme); order of THEME_NAMES.
VISITED_THEMES = np.array([0.16, 0.06, 0.12, 0.11, 0.13, 0.13, 0.10, 0.10, 0.09])
SOURCE_HEAVY = ("housing", "shared", 3.0)  # theme, source where it is heavier, ratio
# Share of each source's articles by outlet, before theme affinity; order of OUTLET_NAMES.
OUTLET_MIX = np.array([[0.25, 0.05, 0.35, 0.20, 0.15], [0.35, 0.15, 0.25, 0.10, 0.15]])
# How readily each outlet (row) covers each theme (column).
AFFINITY = np.array(
    [
        [1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0],  # local daily: covers everything
        [2.0, 1.0, 2.0, 2.0, 0.3, 0.2, 1.0, 3.0, 1.0],  # city-hall bulletin: council business
        [0.7, 1.0, 0.7, 0.5, 3.0, 3.0, 2.0, 0.3, 0.5],  # tabloid: sport, courts, storms
        [1.0, 2.5, 1.5, 1.5, 0.5, 0.5, 0.7, 0.5, 2.5],  # neighbourhood blog: rents, festival
        [2.0, 0.7, 0.7, 0.7, 1.5, 1.5, 2.0, 0.7, 0.7],  # wire service: barrier, storms
    ]
)
HEAVY_OUTLET = "The Gullcry"
START = np.datetime64("2024-03-01")
DAYS = 122  # March to June
STORM = (14, 21)  # the mid-March gale: most storm articles fall in this week
STORM_SHARE = 0.6
TREND = ("arts festival", "shared", 0.3)  # theme, source where it rises, last day's switch chance
_TREND_FIXED = ("housing", "storms and weather")  # themes the trend leaves alone
SENTENCES = (7, 17)  # sentences per article, low inclusive, high exclusive
# Roles of the frame's columns for ``Corpus.from_frame`` (``outlet`` stays as metadata).
CORPUS_COLUMNS = {
    "text": "text",
    "source": "source",
    "id": "id",
    "weight": "weight",
    "group": "reader",
    "url": "url",
    "title": "title",
    "date": "date",
}


@dataclass(frozen=True, eq=False)
class DemoTruth:
    """What was planted in a demo corpus, for checking what later stages find.

    Attributes
    ----------
    docs : DataFrame
        One row per input row: ``id``, ``source``, ``outlet``, ``reader``, ``weight``,
        ``theme`` (dominant), ``second_theme`` (or None), ``theme_share`` (share of the
        article's sentences on the dominant theme) and ``role`` (``"article"``,
        ``"syndicated original"``, ``"syndicated copy"``, ``"heavy reader"``,
        ``"url variant"``).
    source_heavy_theme, source_heavy_source, source_heavy_ratio
        The theme planted ``ratio`` times as common in one source as in the other.
    heavy_reader, heavy_outlet, heavy_visits
        The reader who visits one outlet thousands of times, and how often.
    syndicated : dict
        Story key -> ids of its copies, the wire original first.
    cross_source_copies : tuple
        Ids of syndicated copies whose near-twins sit in the other source.
    boilerplate : dict
        Outlet -> its boilerplate lines.
    url_variants : dict
        Id of an article -> ids of rows that repeat it under another URL.
    themes, theme_words : tuple and dict
        The planted themes, and a few words that mark each one (in each language of the demo).
    language : str
        The demo's language (see ``DEMO_LANGUAGES``); ``docs["language"]`` gives each row's.
    trend_theme, trend_source, trend_max
        The theme that rises over the weeks in one source: see :meth:`trend`.
    """

    n_docs: int
    seed: int
    docs: pd.DataFrame = field(repr=False)
    heavy_reader: str
    heavy_visits: int
    syndicated: dict
    cross_source_copies: tuple
    url_variants: dict
    heavy_outlet: str = HEAVY_OUTLET
    source_heavy_theme: str = SOURCE_HEAVY[0]
    source_heavy_source: str = SOURCE_HEAVY[1]
    source_heavy_ratio: float = SOURCE_HEAVY[2]
    trend_theme: str = TREND[0]
    trend_source: str = TREND[1]
    trend_max: float = TREND[2]
    themes: tuple = THEME_NAMES
    language: str = "en"
    theme_words: dict = field(default=None)
    boilerplate: dict = field(
        default_factory=lambda: {
            name: tuple(line for line, _ in spec["boilerplate"]) for name, spec in OUTLETS.items()
        }
    )

    def __post_init__(self):
        if self.theme_words is None:
            codes = self.language.split("+")
            words = {
                name: tuple(w for c in codes for w in material(c).themes[name]["words"])
                for name in THEMES
            }
            object.__setattr__(self, "theme_words", words)

    def describe(self) -> str:
        """The planted facts in words, for a terminal or a notebook."""
        first = ", ".join(next(iter(self.syndicated.values())))
        n_variants = sum(map(len, self.url_variants.values()))
        return "\n".join(
            [
                f"- {self.source_heavy_theme!r} is {self.source_heavy_ratio:g} times as common among "
                f"{self.source_heavy_source} articles as in the other source",
                f"- {len(self.syndicated)} syndicated wire "
                f"{'story' if len(self.syndicated) == 1 else 'stories'} republished with small edits "
                f"(the first: {first}; its last copy is in the other source)",
                f"- boilerplate lines on most articles of each of the {len(self.boilerplate)} outlets",
                f"- {self.heavy_reader} visited {self.heavy_outlet} {self.heavy_visits:,} times",
                f"- {n_variants} rows repeat {len(self.url_variants)} articles under other URLs "
                "(tracking parameters, www., fragments)",
                f"- {self.trend_theme!r} rises among {self.trend_source} articles from March to "
                f"June (expected share by dominant theme: {self.trend()['expected_share'].iloc[0]:.0%} "
                f"in the first week, {self.trend()['expected_share'].iloc[-1]:.0%} in the last)",
            ]
        )

    def trend(self, freq: str = "W") -> pd.DataFrame:
        """The planted rise: per period (pandas alias ``freq``), the expected share of the
        trend source's articles whose dominant theme is the trend theme.

        Exact for the generator's draws (themes, then days, the storm week's pile-up, then the
        switch); rows planted later (a syndicated story, URL variants) are not counted.
        """
        days = np.arange(DAYS)
        theme, source = THEME_NAMES.index(self.trend_theme), SOURCES.index(self.trend_source)
        probs = _theme_probs()[source]
        storm = THEME_NAMES.index("storms and weather")
        movable = 1 - probs[theme] - sum(probs[THEME_NAMES.index(t)] for t in _TREND_FIXED)
        # P(day | storm article): uniform, plus STORM_SHARE piled on the storm week.
        in_storm = (days >= STORM[0]) & (days < STORM[1])
        storm_days = (1 - STORM_SHARE) / DAYS + STORM_SHARE * in_storm / (STORM[1] - STORM[0])
        on_day = (1 - probs[storm]) / DAYS + probs[storm] * storm_days  # P(day)
        rising = (probs[theme] + movable * _switch_chance(days)) / DAYS  # P(trend theme, day)
        period = pd.DatetimeIndex(START + days.astype("timedelta64[D]")).to_period(freq)
        table = pd.DataFrame({"period": period, "joint": rising, "day": on_day})
        table = table.groupby("period", sort=True)[["joint", "day"]].sum()
        return pd.DataFrame(
            {
                "period": table.index.astype(str),
                "period_start": table.index.start_time,
                "expected_share": (table["joint"] / table["day"]).to_numpy(),
            }
        )

    def to_dict(self) -> dict:
        """Everything but ``docs``, as JSON-ready values."""
        out = {k: v for k, v in self.__dict__.items() if k != "docs"}
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in out.items()}


def _check(owner: str, n_docs, random_state, language="en") -> None:
    if language not in DEMO_LANGUAGES:
        listed = ", ".join(repr(c) for c in DEMO_LANGUAGES)
        raise param_error(owner, "language", language, f"one of {listed}")
    if isinstance(n_docs, bool) or not isinstance(n_docs, int | np.integer) or n_docs < MIN_DOCS:
        fix = f"Smaller corpora cannot hold every planted fact (tm-compare demo --docs {MIN_DOCS})."
        raise param_error(owner, "n_docs", n_docs, f"an integer >= {MIN_DOCS}", fix)
    check_limit(owner, "n_docs", int(n_docs), "demo_docs")
    bad = isinstance(random_state, bool) or not isinstance(random_state, int | np.integer)
    if bad or random_state < 0:
        raise param_error(owner, "random_state", random_state, "a non-negative integer")


def _theme_probs() -> np.ndarray:
    """Rows: shared, visited. The heavy theme's share is multiplied in one source."""
    theme, source, ratio = SOURCE_HEAVY
    t, s = THEME_NAMES.index(theme), SOURCES.index(source)
    heavy = VISITED_THEMES.copy()
    heavy[t] *= ratio
    rest = np.arange(len(heavy)) != t
    heavy[rest] *= (1 - heavy[t]) / heavy[rest].sum()
    return np.stack([heavy, VISITED_THEMES] if s == 0 else [VISITED_THEMES, heavy])


def _draw(rng: np.random.Generator, probs: np.ndarray) -> np.ndarray:
    """One category per row of ``probs`` (rows need not be normalised)."""
    cum = np.cumsum(probs, axis=1)
    u = rng.random(len(probs)) * cum[:, -1]
    return np.minimum((u[:, None] >= cum).sum(axis=1), probs.shape[1] - 1)


def _switch_chance(day: np.ndarray) -> np.ndarray:
    """Chance that an article of the trend source turns to the trend theme, by day."""
    return TREND[2] * day / (DAYS - 1)


def _plant_trend(rng: np.random.Generator, plan: dict) -> None:
    """Turn articles of the trend source to the trend theme, more often as the days pass.

    Uses its own random stream, so every other draw of the demo is unchanged.
    """
    theme, source = THEME_NAMES.index(TREND[0]), SOURCES.index(TREND[1])
    fixed = [theme, *(THEME_NAMES.index(t) for t in _TREND_FIXED)]
    u = rng.random(len(plan["theme"]))
    turn = (plan["source"] == source) & ~np.isin(plan["theme"], fixed)
    turn &= u < _switch_chance(plan["day"])
    # The second theme must differ from the first: the old first theme takes its place.
    clash = turn & (plan["second"] == theme)
    plan["second"][clash] = plan["theme"][clash]
    plan["theme"][turn] = theme


def _exposures(rng: np.random.Generator, n: int, p: float) -> np.ndarray:
    """Geometric counts >= 1 by inverse transform (stable across numpy versions)."""
    u = 1.0 - rng.random(n)
    return 1 + np.floor(np.log(u) / np.log1p(-p)).astype(np.int64)


def _plan(n_docs: int, seed: int) -> dict:
    """Everything about each row except its words: cheap, fully vectorised."""
    rng = np.random.default_rng([seed, 0])
    n = n_docs
    source = (rng.random(n) >= SHARED_FRACTION).astype(np.int64)  # 0 shared, 1 visited
    probs = _theme_probs()[source]
    theme = _draw(rng, probs)
    outlet_given = OUTLET_MIX[:, None, :] * AFFINITY.T[None, :, :]  # source x theme x outlet
    outlet = _draw(rng, outlet_given[source, theme])
    probs[np.arange(n), theme] = 0.0
    second = _draw(rng, probs)
    n_sent = rng.integers(*SENTENCES, size=n)
    share = 0.55 + 0.45 * rng.random(n)
    n_first = np.clip(np.rint(share * n_sent), 1, n_sent).astype(np.int64)
    n_readers = int(np.clip(n // 15, 40, 5000))
    activity = rng.permutation((np.arange(n_readers) + 1.0) ** -0.7)
    cum = np.cumsum(activity)
    reader = np.minimum(np.searchsorted(cum, rng.random(n) * cum[-1], side="right"), n_readers - 1)
    day = rng.integers(0, DAYS, size=n)
    storm = (theme == THEME_NAMES.index("storms and weather")) & (rng.random(n) < STORM_SHARE)
    day = np.where(storm, rng.integers(*STORM, size=n), day)
    weight = np.where(source == 1, _exposures(rng, n, 0.45), _exposures(rng, n, 0.75))
    plan = {
        "source": source,
        "theme": theme,
        "second": second,
        "n_sent": n_sent,
        "n_first": n_first,
        "outlet": outlet,
        "reader": reader,
        "day": day,
        "weight": weight,
        "role": np.full(n, "article", dtype=object),
        "n_readers": n_readers,
    }
    _plant_trend(np.random.default_rng([seed, 1]), plan)
    order = iter(rng.permutation(n).tolist())
    plan["stories"] = _plant_stories(rng, plan, order, max(1, n // 2500))
    plan["heavy"] = _plant_heavy_reader(rng, plan, max(2000, round(1.2 * n)), max(12, n // 100))
    plan["variants"] = _plant_url_variants(plan, order, max(3, n // 300))
    plan["date"] = START + plan["day"].astype("timedelta64[D]")
    return plan


def _plant_stories(rng, plan: dict, order, n_stories: int) -> list[tuple[int, ...]]:
    """Wire original and copies: visited (wire, daily, tabloid) and shared (blog), one reader."""
    placements = [
        ("visited", WIRE, 0),
        ("visited", "Quillhaven Courier", 0),
        ("visited", "The Gullcry", 1),
        ("shared", "Lantern Row Notes", 1),
    ]
    barrier, storm = THEME_NAMES.index("harbour barrier"), THEME_NAMES.index("storms and weather")
    stories = []
    for day in rng.integers(STORM[0], DAYS - 2, size=n_stories).tolist():
        rows = tuple(next(order) for _ in placements)
        for row, (source, outlet, lag) in zip(rows, placements, strict=True):
            plan["source"][row] = SOURCES.index(source)
            plan["outlet"][row] = OUTLET_NAMES.index(outlet)
            plan["theme"][row], plan["second"][row] = barrier, storm
            plan["n_sent"][row], plan["n_first"][row] = 12, 8
            plan["day"][row] = day + lag
            plan["role"][row] = "syndicated copy"
        # One reader meets every copy, so preparation (which merges near-copies only
        # within one source and group) has copies to merge.
        plan["reader"][list(rows)] = plan["reader"][rows[0]]
        plan["role"][rows[0]] = "syndicated original"
        stories.append(rows)
    return stories


def _plant_heavy_reader(rng, plan: dict, visits: int, n_rows: int) -> int:
    """One reader gets ``visits`` exposures spread over tabloid articles they visited."""
    heavy = int(rng.integers(plan["n_readers"]))
    fits = (
        (plan["source"] == SOURCES.index("visited"))
        & (plan["outlet"] == OUTLET_NAMES.index(HEAVY_OUTLET))
        & (plan["role"] == "article")
    )
    rows = rng.permutation(np.flatnonzero(fits))[:n_rows]
    plan["reader"][rows] = heavy
    plan["weight"][rows] = 1 + rng.multinomial(
        visits - len(rows), np.full(len(rows), 1 / len(rows))
    )
    plan["role"][rows] = "heavy reader"
    return heavy


# What a URL variant shares with its article (its weight is its own).
_ARTICLE_KEYS = ("source", "outlet", "theme", "second", "n_sent", "n_first", "reader", "day")


def _plant_url_variants(plan: dict, order, n_groups: int) -> list[tuple[int, list[int]]]:
    """Rows repeating an article (same source, reader and text) under another URL."""
    groups = []
    for g in range(n_groups):
        original = next(row for row in order if plan["role"][row] == "article")
        copies = [
            next(row for row in order if plan["role"][row] == "article") for _ in range(1 + g % 2)
        ]
        for row in copies:
            for key in _ARTICLE_KEYS:
                plan[key][row] = plan[key][original]
            plan["role"][row] = "url variant"
        groups.append((original, copies))
    return groups


def _labels(prefix: str, numbers: np.ndarray, width: int) -> np.ndarray:
    """``prefix`` + zero-padded numbers, as an object array (vectorised)."""
    return np.char.add(prefix, np.char.zfill(numbers.astype(str), width)).astype(object)


def _readers(plan: dict) -> np.ndarray:
    width = max(3, len(str(plan["n_readers"])))
    return _labels("reader_", np.arange(1, plan["n_readers"] + 1), width)[plan["reader"]]


def _languages(plan: dict, seed: int, language: str) -> np.ndarray:
    """Each row's language; in a mixed demo copies and URL variants follow their original."""
    n = len(plan["source"])
    codes = language.split("+")
    if len(codes) == 1:
        return np.full(n, language, dtype=object)
    rng = np.random.default_rng([seed, 2])
    out = np.array(codes, dtype=object)[rng.integers(0, len(codes), size=n)]
    for rows in plan["stories"]:
        out[list(rows)] = out[rows[0]]
    for original, variants in plan["variants"]:
        out[variants] = out[original]
    return out


def _truth(n_docs: int, seed: int, plan: dict, language: str = "en") -> DemoTruth:
    ids = _labels("qh-", np.arange(n_docs), max(6, len(str(n_docs - 1))))
    names = np.array(THEME_NAMES, dtype=object)
    readers = _readers(plan)
    second = np.where(plan["n_first"] < plan["n_sent"], names[plan["second"]], None)
    docs = pd.DataFrame(
        {
            "id": ids,
            "source": np.array(SOURCES, dtype=object)[plan["source"]],
            "outlet": np.array(OUTLET_NAMES, dtype=object)[plan["outlet"]],
            "reader": readers,
            "weight": plan["weight"],
            "theme": names[plan["theme"]],
            "second_theme": second,
            "theme_share": np.round(plan["n_first"] / plan["n_sent"], 3),
            "role": plan["role"],
            "language": _languages(plan, seed, language),
        }
    )
    heavy = plan["reader"] == plan["heavy"]
    heavy &= (plan["outlet"] == OUTLET_NAMES.index(HEAVY_OUTLET)) & (plan["source"] == 1)
    return DemoTruth(
        n_docs=n_docs,
        seed=seed,
        docs=docs,
        heavy_reader=str(readers[np.flatnonzero(heavy)[0]]),
        heavy_visits=int(plan["weight"][heavy].sum()),
        syndicated={
            f"story-{i + 1}": tuple(ids[list(rows)]) for i, rows in enumerate(plan["stories"])
        },
        cross_source_copies=tuple(ids[rows[-1]] for rows in plan["stories"]),
        url_variants={ids[orig]: tuple(ids[copies]) for orig, copies in plan["variants"]},
        language=language,
    )


@renamed_parameters(seed="random_state")
def scenario(
    n_docs: int = 3000, random_state: int = 0, language: str = "en"
) -> tuple[pd.DataFrame, DemoTruth]:
    """The demo articles and what was planted in them.

    Parameters
    ----------
    n_docs : int
        Number of input rows (articles, syndicated copies and URL variants together).
        At least 200; 200,000 takes well under a minute. Up to ``TM_COMPARE_MAX_DEMO_DOCS``
        (200,000 unless raised); benchmarks raise it to generate 1,000,000 (``bench/scale.py``).
    random_state : int
        The same random_state gives the same rows, words and truth.
    language : "en", "de" or "de+en"
        The language the articles are written in; "de+en" mixes German and English
        articles (a column ``language`` of the frame says which is which).

    Returns
    -------
    frame : DataFrame
        Columns ``id``, ``source``, ``outlet``, ``reader``, ``weight`` (exposures),
        ``date``, ``url``, ``title``, ``text``.
    truth : DemoTruth
    """
    _check("demo.scenario", n_docs, random_state, language)
    n_docs, seed = int(n_docs), int(random_state)
    plan = _plan(n_docs, seed)
    planted = _truth(n_docs, seed, plan, language)
    frame = planted.docs[["id", "source", "outlet", "reader", "weight"]].copy()
    frame["date"] = pd.to_datetime(plan["date"])
    titles, texts, links = [], [], []
    for code in language.split("+"):
        t, x = render(plan, seed, code)
        titles.append(np.array(t, dtype=object))
        texts.append(np.array(x, dtype=object))
        links.append(np.array(urls(plan, t, code), dtype=object))
    which = np.searchsorted(np.array(language.split("+")), planted.docs["language"].to_numpy(str))
    rows = np.arange(n_docs)
    frame["url"] = np.stack(links)[which, rows].tolist()
    frame["title"] = np.stack(titles)[which, rows].tolist()
    frame["text"] = np.stack(texts)[which, rows].tolist()
    return frame, planted


@renamed_parameters(seed="random_state")
def make_frame(n_docs: int = 3000, random_state: int = 0, language: str = "en") -> pd.DataFrame:
    """The demo articles as a DataFrame (see :func:`scenario`)."""
    return scenario(n_docs, random_state, language)[0]


@renamed_parameters(seed="random_state")
def truth(n_docs: int = 3000, random_state: int = 0, language: str = "en") -> DemoTruth:
    """What :func:`make_frame` with the same arguments planted; cheap (no text is written)."""
    _check("demo.truth", n_docs, random_state, language)
    seed = int(random_state)
    return _truth(int(n_docs), seed, _plan(int(n_docs), seed), language)


@renamed_parameters(seed="random_state")
def make_corpus(n_docs: int = 3000, random_state: int = 0, language: str = "en"):
    """The demo articles as a :class:`tm_compare.Corpus` (the reader is the group)."""
    from ..text.corpus import Corpus

    return Corpus.from_frame(make_frame(n_docs, random_state, language), **CORPUS_COLUMNS)


#: Size and seed of the small sample kept as a CSV file among the test fixtures.
SAMPLE = {"n_docs": 360, "random_state": 0}


def sample_csv() -> str:
    """CSV text of the small demo sample (``SAMPLE``), exactly as stored in the fixtures."""
    return make_frame(**SAMPLE).to_csv(index=False, lineterminator="\n")
