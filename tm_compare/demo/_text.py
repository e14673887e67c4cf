"""Sentences, titles, texts and URLs of the invented Quillhaven demo, from its word banks.

Everything is made up: the coastal city of Quillhaven, its neighbourhoods, clubs, outlets and
readers do not exist. The words are data, under ``demo/data/``:

- ``banks.json``: ``common``, the banks every theme draws from (``area`` holds the
  neighbourhoods that can name a school or a rowing crew), and ``generic``, sentence templates
  shared by every theme and filled from that theme's banks, so themes share everyday news
  wording ("said", "residents") as real topics do;
- ``themes.json``: per theme, its own banks (``thing``, ``who``), sentence templates
  (``sentences``), headline templates (``titles``), URL section and signature ``words``;
- ``outlets.json``: per outlet, its domain, URL layout and boilerplate lines (each with the
  share of articles carrying it); the wire service, its dateline, the URL variants of repeated
  rows (tracking parameters, ``www.``, a fragment) and the attribution line of syndicated copies.

A placeholder names a bank, and a trailing digit (``{thing2}``) asks for a second, independent
draw from the same bank.

Other languages live in ``data/<code>/`` with the same three files, written in that language
(our own sentences, not translations of real text): the themes keep their English keys, the
outlets their names, domains and URL layouts (only their boilerplate lines, the dateline and the
attribution are in the language). :data:`LANGUAGES` lists the languages the demo is written in.
"""

from __future__ import annotations

import functools
import json
import math
import re
from importlib import resources
from types import SimpleNamespace

import numpy as np


def _load(name: str) -> dict:
    """One data file, its lists read as tuples (the banks are constants)."""
    text = resources.files(__package__).joinpath("data", name).read_text(encoding="utf-8")
    return json.loads(text, object_pairs_hook=lambda pairs: {k: _frozen(v) for k, v in pairs})


def _frozen(value):
    return tuple(_frozen(v) for v in value) if isinstance(value, list) else value


_BANKS = _load("banks.json")
_OUTLETS = _load("outlets.json")
#: Languages the demo is written in (``data/`` holds English, ``data/<code>/`` the others).
LANGUAGES = ("en", "de")
COMMON_BANKS: dict = _BANKS["common"]
GENERIC: tuple = _BANKS["generic"]
THEMES: dict = _load("themes.json")
OUTLETS: dict = _OUTLETS["outlets"]
WIRE: str = _OUTLETS["wire"]
DATELINE: str = _OUTLETS["dateline"]
URL_VARIANTS: tuple = _OUTLETS["url_variants"]
ATTRIBUTION: str = _OUTLETS["attribution"]


@functools.cache
def material(language: str = "en") -> SimpleNamespace:
    """Banks, templates, themes and outlet texts of the demo in ``language``."""
    if language == "en":
        banks, outlets, themes = _BANKS, _OUTLETS, THEMES
    else:
        banks, themes = _load(f"{language}/banks.json"), _load(f"{language}/themes.json")
        outlets = _load(f"{language}/outlets.json")
    merged = {name: {**spec, **outlets["outlets"].get(name, {})} for name, spec in OUTLETS.items()}
    return SimpleNamespace(
        common=banks["common"],
        generic=banks["generic"],
        themes=themes,
        outlets=merged,
        dateline=outlets.get("dateline", DATELINE),
        attribution=outlets.get("attribution", ATTRIBUTION),
    )


# --- rendering: templates -> sentences -> articles ----------------------------------------------
# Strings are built with numpy object arrays (element-wise ``+`` runs in C), grouped by
# template, so 200,000 articles take seconds rather than a Python loop per sentence.
_FIELD = re.compile(r"\{([a-z]+)\d*\}")
_CHUNK = 8192  # articles per batch of random draws; fixed, so the output never depends on it
_SEPARATORS = np.array(["", "\n", " "], dtype=object)


def _parts(template: str, spec: dict, common: dict) -> tuple[list[str], list[np.ndarray]]:
    """Literal pieces and banks of one template; a leading bank is capitalised."""
    names = _FIELD.findall(template)
    banks = [np.array(spec.get(name) or common[name], dtype=object) for name in names]
    literals = _FIELD.split(template)[::2]
    if names and literals[0] == "":
        banks[0] = np.array([w[0].upper() + w[1:] for w in banks[0]], dtype=object)
    return literals, banks


@functools.cache
def _compiled(language: str = "en") -> SimpleNamespace:
    """Templates in one flat list, per-theme offsets and counts, boilerplate tables.

    Each article walks through its theme's templates along a cycle (random start,
    random stride coprime with the count), so no template repeats inside a block
    no longer than the theme's template count.
    """
    m = material(language)
    flat, s_off, s_cnt, t_off, t_cnt, strides = [], [], [], [], [], []
    for name in THEMES:  # the English order, so theme numbers mean the same in every language
        spec = m.themes[name]
        for templates, off, cnt in (
            (spec["sentences"] + m.generic, s_off, s_cnt),
            (spec["titles"], t_off, t_cnt),
        ):
            off.append(len(flat))
            cnt.append(len(templates))
            flat.extend(_parts(template, spec, m.common) for template in templates)
        strides.append([s for s in range(1, s_cnt[-1]) if math.gcd(s, s_cnt[-1]) == 1])
    width = max(map(len, strides))
    n_lines = max(len(spec["boilerplate"]) for spec in m.outlets.values())
    shares = np.zeros((len(OUTLETS), n_lines))
    # tails[outlet, bits]: the outlet's boilerplate lines whose bit is set, each after a line break
    tails = np.empty((len(OUTLETS), 2**n_lines), dtype=object)
    for o, spec in enumerate(m.outlets.values()):
        shares[o, : len(spec["boilerplate"])] = [share for _, share in spec["boilerplate"]]
        for bits in range(2**n_lines):
            lines = [line for j, (line, _) in enumerate(spec["boilerplate"]) if bits >> j & 1]
            tails[o, bits] = "".join("\n" + line for line in lines)
    return SimpleNamespace(
        flat=flat,
        s_off=np.array(s_off),
        s_cnt=np.array(s_cnt),
        t_off=np.array(t_off),
        t_cnt=np.array(t_cnt),
        n_strides=np.array([len(s) for s in strides]),
        strides=np.array([s + [1] * (width - len(s)) for s in strides]),
        slots=max(len(banks) for _, banks in flat),
        shares=shares,
        tails=tails,
        wire=list(OUTLETS).index(WIRE),
        dateline=m.dateline,
        attribution=m.attribution,
    )


def _concat(literals: list[str], columns: list[np.ndarray], n: int) -> np.ndarray:
    """``literals[0] + columns[0] + literals[1] + ...`` element-wise, as an object array."""
    text = np.full(n, literals[0], dtype=object)
    for column, literal in zip(columns, literals[1:], strict=True):
        text = text + column + literal
    return text


def _fill(tid: np.ndarray, draws: np.ndarray, language: str = "en") -> np.ndarray:
    """Template ``tid[i]`` filled with bank entries picked by ``draws[i]``."""
    flat = _compiled(language).flat
    out = np.empty(len(tid), dtype=object)
    order = np.argsort(tid, kind="stable")
    ids, starts = np.unique(tid[order], return_index=True)
    for t, rows in zip(ids.tolist(), np.split(order, starts[1:]), strict=True):
        literals, banks = flat[t]
        picks = [bank[draws[rows, j] % len(bank)] for j, bank in enumerate(banks)]
        out[rows] = _concat(literals, picks, len(rows))
    return out


def _join(
    sentences: np.ndarray,
    counts: np.ndarray,
    outlets: np.ndarray,
    keep_lines: np.ndarray,
    tail: str = "",
    language: str = "en",
) -> np.ndarray:
    """Articles: paragraphs of two or three sentences, one per line, the wire's dateline,
    then ``tail`` and the outlet's boilerplate lines that ``keep_lines`` keeps."""
    c = _compiled(language)
    starts = np.cumsum(counts) - counts
    pos = np.arange(len(sentences)) - np.repeat(starts, counts)
    k = np.repeat(counts, counts)
    last_par = np.maximum(1, k // 2) - 1
    ends_par = np.minimum(pos // 2, last_par) != np.minimum((pos + 1) // 2, last_par)
    sep = _SEPARATORS[np.where(pos == k - 1, 0, np.where(ends_par, 1, 2))]
    pieces = sentences + sep
    wire = starts[outlets == c.wire]
    pieces[wire] = c.dateline + pieces[wire]
    bits = (keep_lines * (1 << np.arange(keep_lines.shape[1]))).sum(axis=1)
    return np.add.reduceat(pieces, starts) + tail + c.tails[outlets, bits]


def _keep_lines(rng, outlets: np.ndarray, language: str = "en") -> np.ndarray:
    shares = _compiled(language).shares
    return rng.random((len(outlets), shares.shape[1])) < shares[outlets]


def _render_chunk(rng, plan: dict, rows: slice, language: str = "en"):
    """Sentences (in article order), titles and texts of the articles in ``rows``."""
    c = _compiled(language)
    ns, nf = plan["n_sent"][rows], plan["n_first"][rows]
    first_theme, second_theme, outlets = (
        plan["theme"][rows],
        plan["second"][rows],
        plan["outlet"][rows],
    )
    doc = np.repeat(np.arange(len(ns)), ns)
    pos = np.arange(len(doc)) - np.repeat(np.cumsum(ns) - ns, ns)
    first = pos < nf[doc]
    theme = np.where(first, first_theme[doc], second_theme[doc])
    u = rng.random((len(ns), 4))
    start = np.where(first, u[doc, 0], u[doc, 1])
    pick = (np.where(first, u[doc, 2], u[doc, 3]) * c.n_strides[theme]).astype(np.int64)
    cnt = c.s_cnt[theme]
    step = np.where(first, pos, pos - nf[doc]) * c.strides[theme, pick]
    tid = c.s_off[theme] + ((start * cnt).astype(np.int64) + step) % cnt
    sentences = _fill(tid, rng.integers(0, 2**31, (len(doc), c.slots)), language)
    t_tid = c.t_off[first_theme] + (rng.random(len(ns)) * c.t_cnt[first_theme]).astype(np.int64)
    titles = _fill(t_tid, rng.integers(0, 2**31, (len(ns), c.slots)), language)
    keep = _keep_lines(rng, outlets, language)
    return sentences, titles, _join(sentences, ns, outlets, keep, language=language)


def render(plan: dict, seed: int, language: str = "en") -> tuple[list[str], list[str]]:
    """Titles and texts of every planned row (see ``tm_compare.demo``), in ``language``."""
    rng = np.random.default_rng([seed, 1])
    n = len(plan["source"])
    titles, texts, originals = [], [], {rows[0]: None for rows in plan["stories"]}
    for start in range(0, n, _CHUNK):
        rows = slice(start, min(n, start + _CHUNK))
        sentences, t, x = _render_chunk(rng, plan, rows, language)
        titles.extend(t.tolist())
        texts.extend(x.tolist())
        bounds = np.cumsum(plan["n_sent"][rows]) - plan["n_sent"][rows]
        for row in (r for r in originals if rows.start <= r < rows.stop):
            begin = bounds[row - start]
            originals[row] = sentences[begin : begin + plan["n_sent"][row]]
    # Syndicated copies: the wire's sentences less one, with an attribution line.
    copies = [(row, rows[0]) for rows in plan["stories"] for row in rows[1:]]
    if copies:
        drops = [int(rng.integers(1, len(originals[o]))) for _, o in copies]
        kept = [np.delete(originals[o], d) for (_, o), d in zip(copies, drops, strict=True)]
        rows = np.array([row for row, _ in copies])
        outlets = plan["outlet"][rows]
        joined = _join(
            np.concatenate(kept),
            np.array([len(s) for s in kept]),
            outlets,
            _keep_lines(rng, outlets, language),
            "\n" + _compiled(language).attribution,
            language,
        )
        for row, text in zip(rows.tolist(), joined.tolist(), strict=True):
            texts[row] = text
    for original, variants in plan["variants"]:
        for row in variants:
            titles[row], texts[row] = titles[original], texts[original]
    return titles, texts


_ASCII = str.maketrans({"ä": "ae", "ö": "oe", "ü": "ue", "ß": "ss", "é": "e", "è": "e"})


def urls(plan: dict, titles: list[str], language: str = "en") -> list[str]:
    """One URL per row, under the reserved ``.example`` top-level domain (RFC 2606).

    Each outlet has its own URL layout; URL variants repeat their article's URL
    with tracking parameters, ``www.`` or a fragment added.
    """
    n = len(titles)
    days, day_of = np.unique(plan["date"], return_inverse=True)
    ymd = np.array([str(d).replace("-", "/") for d in days], dtype=object)
    slug_of = {
        t: "-".join(re.findall(r"[a-z0-9]+", t.lower().translate(_ASCII))[:7]) for t in set(titles)
    }
    values = {
        "domain": np.array([spec["domain"] for spec in OUTLETS.values()], dtype=object)[
            plan["outlet"]
        ],
        "section": np.array(
            [material(language).themes[name]["section"] for name in THEMES], dtype=object
        )[plan["theme"]],
        "ymd": ymd[day_of],
        "ym": np.array([d[:7] for d in ymd], dtype=object)[day_of],
        "slug": np.array([slug_of[t] for t in titles], dtype=object),
        "serial": np.arange(100_000, 100_000 + n).astype(str).astype(object),
    }
    out = np.empty(n, dtype=object)
    for o, spec in enumerate(OUTLETS.values()):
        rows = np.flatnonzero(plan["outlet"] == o)
        names = _FIELD.findall(spec["url"])
        out[rows] = _concat(
            _FIELD.split(spec["url"])[::2], [values[k][rows] for k in names], len(rows)
        )
    for g, (original, variants) in enumerate(plan["variants"]):
        for j, row in enumerate(variants):
            url = out[original]
            out[row] = URL_VARIANTS[(g + j) % len(URL_VARIANTS)].format(
                url=url,
                token=f"{(row * 2654435761) % 16**10:010x}",
                www=url.replace("https://", "https://www.", 1),
            )
    return out.tolist()
