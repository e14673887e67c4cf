"""Stage 3, compare: prevalence by source and differences between sources with bootstrap
intervals (:mod:`.prevalence`), term rankings and source wording (:mod:`.terms`), and
representative documents (:mod:`.documents`).
"""
