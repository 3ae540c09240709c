"""validator: statistics and dossiers for analytical method validation.

The layers point one way: :mod:`validator.loading` (study file and CSV) ->
the analysis modules (:mod:`validator.calibration`, ...) -> :mod:`validator.criteria`
-> :mod:`validator.results` (results.json) -> :mod:`validator.report` (HTML/PDF).
"""

__version__ = "0.1.0"

from .errors import DataError, OutputError, StudyError, ValidatorError  # noqa: E402

__all__ = ["__version__", "ValidatorError", "StudyError", "DataError", "OutputError"]
