"""Stage 4, labels: the team's label store (:mod:`.store`, schema and migrations in
:mod:`._schema`, label files in :mod:`._files`), the team's categories (:mod:`.categories`)
and agreement between analysts (:mod:`.agreement`).
"""
