"""Reading inputs: the study file (:mod:`.study`), data tables (:mod:`.tables`), the loaded
study (:mod:`.loading`), the earlier results file of a re-validation (:mod:`.previous`) and
the output manifest (:mod:`.integrity`). Every user-fixable problem becomes a
``StudyError``/``DataError`` naming file, row, column or key, and the value."""
