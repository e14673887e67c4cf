"""Stage 2, models: LDA fits (:mod:`.fits`), the sweep of fits over k and seeds
(:mod:`.sweeps`), their scores and the suggested k (:mod:`.scores`), and topic alignment
between fits (:mod:`.alignment`).
"""
