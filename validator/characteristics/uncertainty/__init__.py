"""Measurement uncertainty, top-down (issue #13): u(Rw), u(bias), combined and expanded per level.

``analysis`` is the pure part and its criteria, ``settings`` the [uncertainty] table,
``presentation`` the sentences and the budget figure built from the results.json entry.
"""
