"""The validation characteristics, one package each (calibration, samples, detection with the
blanks, recovery, reference material, working range with the LOQ verification, method
comparison, re-validation), each holding its study-file table and loader, its pure analysis
and criteria, its sentences and figures, and its registry entry (see validator.registry).
Precision is still a module (``precision.py``) whose registry step is in ``_legacy``."""
