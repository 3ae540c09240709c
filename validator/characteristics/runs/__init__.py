"""Analytical runs: each run's calibration, and every other injection quantified through it."""
