"""The validation characteristics, one package each (calibration, samples, detection with the
blanks, recovery, precision, accuracy profile, reference material, measurement uncertainty,
working range with the LOQ verification, the sector characteristics, method comparison,
re-validation), each holding its study-file table and loader, its pure analysis and criteria,
its sentences and figures, and its registry entry (see validator.registry)."""
