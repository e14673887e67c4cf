"""Stage 1, text: corpus intake (:mod:`.corpus`) and preparation (:mod:`.prepared`).

Produces a :class:`~tm_compare.text.corpus.Corpus` (rows read, typed, URL-canonicalised and
merged, with a removal log) and a :class:`~tm_compare.text.prepared.PreparedCorpus` (tokens, stop
words, phrases, boilerplate and near-duplicates removed, vocabulary pruned, stored in a project).
"""
