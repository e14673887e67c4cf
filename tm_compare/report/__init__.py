"""What leaves the notebook: exported tables and charts (:mod:`.exports`) and the
self-contained HTML report (:mod:`.html`). Both read :mod:`tm_compare.results`.
"""
