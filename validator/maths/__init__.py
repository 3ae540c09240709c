"""Pure, reusable mathematics: weighted polynomial regression (:mod:`.regression`), one-way
ANOVA (:mod:`.anova`), outlier tests (:mod:`.outliers`), method-comparison regressions
(:mod:`.method_comparison`) and distribution helpers (:mod:`.distributions`). Arrays in,
frozen dataclasses out; no files, no text for the user."""
