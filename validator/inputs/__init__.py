"""Reading inputs: the study file (:mod:`.study`), data tables (:mod:`.tables`), the
loaded study with the earlier results file (:mod:`.loading`) and the output manifest
(:mod:`.integrity`). Every user-fixable problem becomes a ``StudyError``/``DataError``
naming file, row, column or key, and the value."""
