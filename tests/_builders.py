"""Real prepared corpora and fits from small arrays, for tests that plant their own answer.

Both go through the public constructors users have for tokens and models made elsewhere
(:meth:`PreparedCorpus.from_texts`, :meth:`Fit.from_arrays`), so production code never
needs to accept a stand-in.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus


def build_prepared(
    sources, texts=None, *, ids=None, weights=None, groups=None, vocab=None, **columns
) -> PreparedCorpus:
    """A prepared corpus with one document per entry of ``sources``.

    ``texts`` are token lists (default: empty documents, for tests that read only metadata);
    ``ids`` default to ``d0, d1, ...``; ``columns`` are further ``meta`` columns (title, ...).
    """
    n = len(sources)
    meta = pd.DataFrame(
        {
            "id": [f"d{i}" for i in range(n)] if ids is None else list(ids),
            "source": np.asarray(sources).astype(str),
            "weight": np.ones(n) if weights is None else np.asarray(weights, dtype=float),
            "group": np.full(n, None, dtype=object) if groups is None else groups,
            **columns,
        }
    )
    texts = [[] for _ in range(n)] if texts is None else texts
    return PreparedCorpus.from_texts(texts, meta, vocab=vocab)


def topics_fit(topic_term, vocab, *, random_state=0, doc_topic=None) -> Fit:
    """A fit of the given topics over ``vocab``, for tests that read only its topics.

    Its corpus has one document (or one per row of ``doc_topic``) holding each term once;
    by default the document's topic shares are uniform.
    """
    k = len(topic_term)
    doc_topic = np.full((1, k), 1 / k) if doc_topic is None else np.asarray(doc_topic, float)
    n = len(doc_topic)
    prepared = build_prepared(["only"] * n, [list(vocab)] * n, vocab=list(vocab))
    return Fit.from_arrays(prepared, topic_term, doc_topic, random_state=random_state)
