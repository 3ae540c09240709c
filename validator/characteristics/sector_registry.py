"""The characteristics that sector guidelines add (issue #15), in the order they are assessed.

Each is a package of :mod:`validator.characteristics` with ``NAME``, ``TITLE``, ``SETTINGS`` (its
study-file section), ``load`` (its data files), ``assess`` (one registry step), ``RESULT_TYPES``
(written to results.json) and ``FRAGMENT`` (its dossier section); ``presentation`` gives its
sentences and figures. The engine, the study schema, the loader, results.json and the dossier
take them from :data:`PACKAGES`.
"""

from __future__ import annotations

from . import (carry_over, dilution_integrity, limit_of_blank, matrix_effect, method_detection_limit, reanalysis,
               selectivity, stability)

__all__ = ["PACKAGES", "NAMES"]

PACKAGES = (limit_of_blank, method_detection_limit, matrix_effect, carry_over, selectivity, stability, dilution_integrity,
            reanalysis)
NAMES = tuple(p.NAME for p in PACKAGES)
