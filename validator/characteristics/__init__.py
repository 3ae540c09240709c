"""The validation characteristics. Each new one is a package (``recovery/``,
``reference_material/``) holding its study-file table and loader, its pure analysis and
criteria, its sentences and figures, and its registry entry; the others (calibration,
detection, precision, working range with the LOQ verification, method comparison,
re-validation) are still modules whose registry steps are in ``_legacy``."""
