"""Sector-specific validation statistics (issue #15), as pure functions.

The engine uses them through the characteristic packages of :mod:`validator.characteristics`
(``limit_of_blank``, ``method_detection_limit``, ``matrix_effect``, ``carry_over``, ``selectivity``,
``stability``, ``dilution_integrity``, ``reanalysis``; each an entry of ``validator.registry``), and
:mod:`.presets` holds the guideline presets of default criteria.

* :mod:`.ep17` - CLSI EP17-A2 limit of blank, limit of detection, limit of quantitation.
* :mod:`.mdl` - method detection limit, 40 CFR Part 136 Appendix B, Revision 2 (2017).
* :mod:`.matrix_effect` - SANTE/11312/2021 slope-ratio matrix effect; ICH M10 matrix lots and the
  IS-normalised matrix factor.
* :mod:`.bioanalytical` - ICH M10 carry-over, selectivity, stability, dilution integrity,
  incurred-sample reanalysis.

Every function takes arrays and numbers and returns a frozen dataclass; nothing reads files or
prints. Degenerate but legal data give ``None`` values with a ``reason``; invalid parameters raise
``ValueError`` quoting the value and the allowed range.
"""

from .bioanalytical import (CarryOver, DilutionIntegrity, IncurredSampleReanalysis, ReanalysedSample, Selectivity,
                            SelectivityLot, Stability, carry_over, dilution_integrity, incurred_sample_reanalysis,
                            reanalysis_sample_count, selectivity, stability)
from .ep17 import (LimitOfBlank, LimitOfDetection, LimitOfQuantitation, LotLimit, QuantitationLevel,
                   coverage_factor, limit_of_blank, limit_of_detection, limit_of_quantitation,
                   nonparametric_percentile)
from .matrix_effect import (LotAccuracy, LotAccuracyAssessment, MatrixFactorLot, NormalisedMatrixFactor,
                            SlopeRatioMatrixEffect, lot_accuracy, normalised_matrix_factor,
                            slope_ratio_matrix_effect)
from .mdl import MethodDetectionLimit, method_detection_limit

__all__ = [
    "CarryOver", "DilutionIntegrity", "IncurredSampleReanalysis", "ReanalysedSample", "Selectivity",
    "SelectivityLot", "Stability", "carry_over", "dilution_integrity", "incurred_sample_reanalysis",
    "reanalysis_sample_count", "selectivity", "stability",
    "LimitOfBlank", "LimitOfDetection", "LimitOfQuantitation", "LotLimit", "QuantitationLevel",
    "coverage_factor", "limit_of_blank", "limit_of_detection", "limit_of_quantitation",
    "nonparametric_percentile",
    "LotAccuracy", "LotAccuracyAssessment", "MatrixFactorLot", "NormalisedMatrixFactor",
    "SlopeRatioMatrixEffect", "lot_accuracy", "normalised_matrix_factor", "slope_ratio_matrix_effect",
    "MethodDetectionLimit", "method_detection_limit",
]
