"""validator: statistics and dossiers for analytical method validation.

The layers point one way, and the sub-packages show them:
:mod:`validator.inputs` (study file, data tables, earlier results, manifest) ->
:mod:`validator.maths` (pure, reusable statistics) -> :mod:`validator.characteristics`
(one module per validation characteristic) run by :mod:`validator.engine` ->
:mod:`validator.criteria` -> :mod:`validator.results` (results.json) ->
:mod:`validator.report` (HTML/PDF). :mod:`validator.cli` is the command line.
"""

__version__ = "0.1.0"

from .errors import DataError, OutputError, StudyError, ValidatorError  # noqa: E402

__all__ = ["__version__", "ValidatorError", "StudyError", "DataError", "OutputError"]
