"""Accuracy profile (issue #13): beta-expectation tolerance intervals per level and the validated range.

``analysis`` is the pure part and its criteria, ``settings`` the [accuracy_profile] table,
``presentation`` the sentences and the figure built from the results.json entry.
"""
