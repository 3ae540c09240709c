"""Sample ids checked against the study's expected list, and near-duplicate ids flagged.

A typed id (``RB-O1`` for ``RB-01``) turns one sample with two readings into two samples with
one reading each, and everything downstream still passes. Two checks prevent that silence:

- with ``[samples] expected = [...]`` (and optionally ``expected_readings``), every expected
  id must be present with its readings and no other id may appear: a missing, unexpected or
  miscounted id is an error, and an unexpected id one edit from an expected one is named as
  the probable typo;
- without the list, ids one edit apart that have one reading each are reported as a flagged
  warning in results.json and the dossier (they may be a typo, or two genuine samples).

One edit is one character inserted, deleted or replaced (Levenshtein distance 1).
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import DataError, StudyError, show

__all__ = ["NearDuplicateIds", "one_edit_apart", "check_expected", "near_duplicates", "spelling_key",
           "spelling_variant"]


def spelling_key(label: str) -> str:
    """The form in which two labels (sample ids, run and day labels) are one label: letter case and
    runs of white space ignored ("B1", "b1" and "b 1" are not the same key; "Run 1" and "run  1" are)."""
    return " ".join(label.split()).casefold()


def spelling_variant(labels) -> tuple[int, int] | None:
    """``(i, j)``, ``i < j``: the first label ``labels[j]`` written differently from an earlier one
    ``labels[i]`` that has the same :func:`spelling_key` (one label typed two ways); None if none.

    The caller says what the labels are and names both rows in its error.
    """
    seen: dict = {}
    for j, label in enumerate(labels):
        i = seen.setdefault(spelling_key(label), j)
        if labels[i] != label:
            return i, j
    return None


@dataclass(frozen=True)
class NearDuplicateIds:
    """Two sample ids one edit apart, each with one reading: possibly one sample typed twice."""

    analyte: str
    ids: tuple[str, str]
    rows: tuple[int, int]            # the file row of each id's reading
    file: str

    @property
    def text(self) -> str:
        a, b = self.ids
        return (f'sample ids "{a}" (row {self.rows[0]}) and "{b}" (row {self.rows[1]}) of {self.file} differ by '
                "one character and have one reading each: one sample typed two ways, or two samples? "
                "Check the ids; list the expected ids in [samples] expected = [...] to make this an error")


def one_edit_apart(a: str, b: str) -> bool:
    """True when ``b`` is ``a`` with exactly one character inserted, deleted or replaced.

    Notes
    -----
    Levenshtein distance 1, decided in one pass: after the common prefix, the
    rests must be equal once one character is skipped on the longer side (or
    on both sides for a replacement).

    References
    ----------
    .. [1] V. I. Levenshtein, Binary codes capable of correcting deletions,
       insertions, and reversals, Soviet Physics Doklady 10 (1966) 707-710.
    """
    if a == b or abs(len(a) - len(b)) > 1:
        return False
    if len(a) > len(b):
        a, b = b, a
    i = 0
    while i < len(a) and a[i] == b[i]:
        i += 1
    if len(a) == len(b):
        return a[i + 1:] == b[i + 1:]
    return a[i:] == b[i + 1:]


def check_expected(*, analyte: str, ids: list, rows: list, file: str, expected: tuple,
                   expected_readings: int | None, study: str) -> None:
    """Refuse a missing, unexpected or miscounted sample id (``ids``/``rows``: one per reading)."""
    wanted = set(expected)
    first_row = {}
    counts = {}
    for sid, row in zip(ids, rows):
        first_row.setdefault(sid, row)
        counts[sid] = counts.get(sid, 0) + 1
    for sid, row in first_row.items():
        if sid not in wanted:
            near = [e for e in expected if one_edit_apart(sid, e)]
            hint = f'; did you mean "{show(near[0])}"?' if near else ""
            raise DataError(f'sample id "{show(sid)}" is not in [samples] expected{hint}', file=file, row=row,
                            column="sample", value=sid)
    for i, sid in enumerate(expected):
        if sid not in counts:
            near = [s for s in counts if one_edit_apart(sid, s)]
            hint = f' ("{show(near[0])}" is one character different)' if near else ""
            raise StudyError(f'expected sample "{show(sid)}" has no reading for analyte "{show(analyte)}" in '
                             f"{show(file)}{hint}", file=study, key=f"samples.expected[{i}]", value=sid)
        if expected_readings is not None and counts[sid] != expected_readings:
            raise DataError(f'sample "{show(sid)}" has {counts[sid]} reading(s) for analyte "{show(analyte)}"; '
                            f"[samples] expected_readings = {expected_readings}", file=file,
                            row=first_row[sid], column="sample", value=sid)


def near_duplicates(*, analyte: str, ids: list, rows: list, file: str) -> tuple[NearDuplicateIds, ...]:
    """Pairs of ids one edit apart that have one reading each, in the order of the file."""
    counts, first_row = {}, {}
    for sid, row in zip(ids, rows):
        counts[sid] = counts.get(sid, 0) + 1
        first_row.setdefault(sid, row)
    single = [s for s in first_row if counts[s] == 1]
    position = {s: k for k, s in enumerate(single)}
    by_length = {}
    for s in single:
        by_length.setdefault(len(s), []).append(s)
    out = []
    for a in single:
        # each pair once: a partner of the same length later in the file, or one character longer
        for b in by_length.get(len(a), ()):
            if position[b] > position[a] and one_edit_apart(a, b):
                out.append((a, b))
        for b in by_length.get(len(a) + 1, ()):
            if one_edit_apart(a, b):
                out.append((a, b))
    pairs = []
    for a, b in out:
        pair = tuple(sorted((a, b), key=lambda s: first_row[s]))
        pairs.append(NearDuplicateIds(analyte, pair, (first_row[pair[0]], first_row[pair[1]]), file))
    return tuple(sorted(pairs, key=lambda p: p.rows))
