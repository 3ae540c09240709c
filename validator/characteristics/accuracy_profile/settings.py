"""The [accuracy_profile] table of the study file.

It reads no file of its own: the profile is built from the precision data (level = nominal
value, found, and the run: the innermost factor of [precision] design, else the series).
The models live in validator.inputs.study until the study schema is assembled per
characteristic.
"""

from ...inputs.study import AcceptanceLevel, AccuracyProfileSection

__all__ = ["AccuracyProfileSection", "AcceptanceLevel"]
