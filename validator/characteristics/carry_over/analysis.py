"""Carry-over judged (ICH M10): blanks after the highest calibrator against the LLOQ (and IS) response.

Two ways in: the ``[carry_over]`` data file (blank and LLOQ rows), or the sequences of the
analytical runs (``[[runs]]``), where the blank is the injection right after a run's highest
calibrator (:func:`carry_over_from_runs`).
"""

from __future__ import annotations

import numpy as np

from ..._common import not_above
from ...criteria import Criterion, at_most
from ...sector._shared import MAX_MAGNITUDE
from ...sector.bioanalytical import CarryOver, CarryOverBlank, carry_over

__all__ = ["CarryOver", "CarryOverBlank", "assess_carry_over", "carry_over_from_runs", "carry_over_criteria"]


def assess_carry_over(data, *, analyte_limit_pct: float, internal_standard_limit_pct: float) -> CarryOver:
    """% = 100 × blank response / mean LLOQ response per blank; see
    :func:`validator.sector.bioanalytical.carry_over`."""
    return carry_over(data.blank, data.lloq, blank_internal_standard=data.blank_internal_standard,
                      internal_standard_response=data.lloq_internal_standard,
                      analyte_limit_percent=analyte_limit_pct, internal_standard_limit_percent=internal_standard_limit_pct)


def _describe(inj) -> str:
    return f'"{inj.sample}" ({inj.type}, {inj.file} row {inj.row})'


# the injection types that may follow the highest calibrator as a carry-over blank
CARRY_OVER_BLANKS = ("blank", "zero")
ZERO_NOTE = ("a zero sample (blank matrix with the internal standard): its IS area is the internal standard "
             "added, not carry-over, so only its analyte part is judged")


def _run_blanks(run: str, own: list) -> list[CarryOverBlank]:
    """The blanks injected right after the run's highest calibrator, or one entry saying why there is none."""
    first = own[0]
    none = dict(run=run, blank="", type="", file=first.file, sheet=first.sheet, row=None, after="", after_row=None,
                highest_level=None, lloq_level=None, lloq_injections=0, lloq_response=None, blank_response=None,
                analyte_percent=None, internal_standard_reference=None, blank_internal_standard=None,
                internal_standard_percent=None)
    calibrators = [i for i in own if i.type == "calibrator"]
    if not calibrators:
        return [CarryOverBlank(**none, reason=f'run "{run}" has no calibrator, so no highest calibrator to follow')]
    highest = max(i.level for i in calibrators)
    lowest = min(i.level for i in calibrators)
    lloq = [i for i in calibrators if i.level == lowest]
    lloq_mean = float(np.mean([i.analyte_response for i in lloq]))
    none.update(highest_level=float(highest), lloq_level=float(lowest), lloq_injections=len(lloq),
                lloq_response=lloq_mean)
    tops = [k for k, i in enumerate(own) if i.type == "calibrator" and i.level == highest]
    pairs = [(own[k], own[k + 1]) for k in tops if k + 1 < len(own) and own[k + 1].type in CARRY_OVER_BLANKS]
    if not pairs:
        last = own[tops[-1]]
        after = own[tops[-1] + 1] if tops[-1] + 1 < len(own) else None
        what = ("is the run's last injection" if after is None
                else f"is followed by {_describe(after)}, not a blank or zero sample")
        return [CarryOverBlank(**{**none, "after": last.sample, "after_row": last.row},
                               reason=f'no blank was injected right after the highest calibrator of run "{run}": '
                                      f"{_describe(last)} {what}")]
    if not lloq_mean >= 1 / MAX_MAGNITUDE:        # the smallest reference the percentage takes
        return [CarryOverBlank(**none, reason=f'the mean response of the lowest calibrators of run "{run}" is '
                                              f"{lloq_mean:g}; no percentage of it exists")]
    # the internal standard is mapped when the calibrators have IS areas (they always do then)
    spiked = [i.internal_standard_response for i in own if i.type in ("calibrator", "qc")]
    with_is = all(v is not None for v in spiked)
    is_ref = float(np.mean(spiked)) if with_is else None
    out = []
    for top, blank in pairs:
        note = ""
        if with_is and blank.type == "zero":
            note = ZERO_NOTE
        elif with_is and blank.internal_standard_response is None:
            note = (f"no IS area is given for {_describe(blank)}, so its IS part is not judged (write 0 when no "
                    "IS peak was found)")
        judged_is = with_is and not note
        r = carry_over([blank.analyte_response], [i.analyte_response for i in lloq],
                       blank_internal_standard=[blank.internal_standard_response] if judged_is else None,
                       internal_standard_response=spiked if judged_is else None)
        out.append(CarryOverBlank(**{**none, "blank": blank.sample, "type": blank.type, "file": blank.file,
                                     "sheet": blank.sheet, "row": blank.row, "after": top.sample,
                                     "after_row": top.row, "blank_response": float(blank.analyte_response),
                                     "analyte_percent": r.analyte_percent[0],
                                     "internal_standard_reference": is_ref,
                                     "blank_internal_standard": (None if blank.internal_standard_response is None
                                                                 or not with_is
                                                                 else float(blank.internal_standard_response)),
                                     "internal_standard_percent": (r.internal_standard_percent[0]
                                                                   if judged_is else None)},
                                  internal_standard_note=note))
    return out


def carry_over_from_runs(injections, *, analyte_limit_pct: float, internal_standard_limit_pct: float) -> CarryOver:
    """Carry-over read from the sequences of the analytical runs, run by run.

    Parameters
    ----------
    injections : sequence
        One analyte's injections, objects with the attributes of
        :class:`validator.inputs.runs.Injection` (run, type, level, sample, analyte_response,
        internal_standard_response, file, sheet, row, position).

    Notes
    -----
    In each run, in the order of ``position`` (the export's row order, or its mapped order
    column; injections left out by [[exclusions]] are not in the sequence), every injection of
    type blank or zero that comes right after a calibrator at the run's highest level is a
    carry-over blank. Its analyte response (the raw area, not the ratio to the internal standard) as
    % = 100 x blank / mean analyte response of the run's calibrators at the lowest level (the
    LLOQ); with an internal standard, the blank's IS response as % of the mean IS response of the
    run's calibrators and QCs. ICH M10 sec. 3.2.6 (from memory: analyte <= 20 % of the LLOQ,
    IS <= 5 %). The IS part needs a blank without internal standard (type blank, ICH M10's
    "blank sample"): a zero sample (type zero, internal standard added) is judged on its analyte
    part only, and a blank with no IS area given has no IS part; the IS criterion is then judged
    on the other blanks only when every blank has one, else not at all (with the reason).
    A run with no blank right after its highest calibrator is listed with the reason;
    with no such blank in any run the carry-over is not judged (``passed`` None).
    """
    runs: dict = {}
    for inj in injections:
        runs.setdefault(inj.run, []).append(inj)
    rows = []
    for run, own in runs.items():
        rows.extend(_run_blanks(run, sorted(own, key=lambda i: i.position)))
    judged = [r for r in rows if r.analyte_percent is not None]
    if not judged:
        return CarryOver(analyte_percent=(), internal_standard_percent=None, max_analyte_percent=None,
                         max_internal_standard_percent=None, analyte_limit_percent=float(analyte_limit_pct),
                         internal_standard_limit_percent=float(internal_standard_limit_pct), passed=None,
                         reason="; ".join(r.reason for r in rows), data_from="runs", run_blanks=tuple(rows))
    a_pct = tuple(r.analyte_percent for r in judged)
    with_is = any(r.internal_standard_reference is not None for r in judged)
    blanks = [r for r in judged if r.type == "blank"]
    missing = [r for r in blanks if r.internal_standard_percent is None]
    note = ""
    i_pct = None
    if with_is:
        if missing:
            note = "; ".join(r.internal_standard_note for r in missing)
        elif not blanks:
            note = ("only zero samples (internal standard added) follow the highest calibrators: there is no blank "
                    "without internal standard to judge the IS part on")
        else:
            i_pct = tuple(r.internal_standard_percent for r in blanks)
    max_i = None if i_pct is None else max(i_pct)
    passed = bool(not_above(max(a_pct), analyte_limit_pct)
                  and (max_i is None or not_above(max_i, internal_standard_limit_pct)))
    return CarryOver(analyte_percent=a_pct, internal_standard_percent=i_pct, max_analyte_percent=max(a_pct),
                     max_internal_standard_percent=max_i, analyte_limit_percent=float(analyte_limit_pct),
                     internal_standard_limit_percent=float(internal_standard_limit_pct), passed=passed,
                     data_from="runs", run_blanks=tuple(rows), internal_standard_note=note)


def carry_over_criteria(result: CarryOver) -> tuple[Criterion, ...]:
    """``carry-over`` (largest blank, % of the LLOQ response) and, with IS responses,
    ``carry-over-internal-standard``; not applicable (with the reason) when no blank was found, and
    the IS part alone when an IS is mapped but no blank without it shows its IS area. A run of the sequences
    with no assessable blank is named in the note of the criteria judged on the others (never a silent gap)."""
    unjudged = list(dict.fromkeys(r.run for r in result.run_blanks if r.analyte_percent is None))
    partly = (f"run(s) not judged: {', '.join(unjudged)} ("
              + "; ".join(r.reason for r in result.run_blanks if r.analyte_percent is None and r.reason) + ")"
              if unjudged else "")
    note = f"not applicable: {result.reason}" if result.max_analyte_percent is None else partly
    out = [Criterion("carry-over", f"largest blank after the highest calibrator at most {result.analyte_limit_percent:g} % "
                     "of the mean LLOQ analyte response", result.max_analyte_percent, result.analyte_limit_percent,
                     at_most(result.max_analyte_percent, result.analyte_limit_percent), note)]
    if result.max_internal_standard_percent is not None:
        out.append(Criterion("carry-over-internal-standard",
                             f"largest IS response in those blanks at most {result.internal_standard_limit_percent:g} % "
                             "of the mean IS response", result.max_internal_standard_percent,
                             result.internal_standard_limit_percent,
                             at_most(result.max_internal_standard_percent, result.internal_standard_limit_percent),
                             partly))
    elif result.internal_standard_note:        # an IS is mapped, but no blank without it can show its part
        out.append(Criterion("carry-over-internal-standard",
                             f"largest IS response in those blanks at most {result.internal_standard_limit_percent:g} % "
                             "of the mean IS response", None, result.internal_standard_limit_percent, None,
                             f"not applicable: {result.internal_standard_note}"))
    return tuple(out)
