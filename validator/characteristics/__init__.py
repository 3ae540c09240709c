"""The validation characteristics, one module each: calibration, detection capability,
recovery (with the reference material), precision, working range (with the LOQ
verification), method comparison and re-validation against an earlier run."""
