"""Findings of the second hostile black-box run, round 2 (notes: hostile-r2/FINDINGS.md numbers), each kept as a test.

The rules are the README's (common practice, no published source, unless a test names one);
expected numbers are hand computations from the formula beside them.
"""

from __future__ import annotations

import pytest

from validator.characteristics.working_range.analysis import loq_criterion, verify_loq


class _P:
    """A precision level as verify_loq reads it (level and repeatability RSD)."""

    def __init__(self, level, rsd):
        self.level, self.repeatability_rsd_pct = level, rsd


# ----------------------------------------------------------------------------- 3: LOQ check on an RSD of 0
def test_loq_check_on_identical_results_is_not_applicable():
    # README "On the limit": identical results (SD exactly 0) show no spread; an RSD of 0 is never judged met
    check = verify_loq(1.18, [_P(1.0, 0.0)], [], 20.0)
    assert check.passed is None
    assert "precision level 1 show no spread at all (SD exactly 0)" in check.reason
    c = loq_criterion(check)
    assert c.passed is None and c.value is None and c.note.startswith("not applicable: ")
    # with another level that has a real RSD the check is still not met, and the value shown is that RSD
    check = verify_loq(1.18, [_P(1.0, 0.0), _P(2.0, 3.0)], [], 20.0)
    assert check.passed is None
    c = loq_criterion(check)
    assert c.passed is None and c.value == 3.0
    # a level beyond the maximum fails whatever the other shows
    assert verify_loq(1.18, [_P(1.0, 0.0), _P(2.0, 25.0)], [], 20.0).passed is False


# ----------------------------------------------------------------------------- 8: huge dilution factor, figure
def test_dilution_figure_skips_results_outside_the_floating_point_range():
    # a factor of 1e306 makes result × factor overflow: results.json holds null for it (the level is not
    # judged); the figure draws the other levels and says that one result was not drawn
    from types import SimpleNamespace

    from validator.characteristics.dilution_integrity.presentation import figures
    entry = {"levels": [
        {"dilution_factor": 1e306, "nominal": 2000.0, "back_calculated": [None], "max_bias_percent": 15.0},
        {"dilution_factor": 10.0, "nominal": 2000.0, "back_calculated": [1970.0, float("inf"), 2010.0],
         "max_bias_percent": 15.0}]}
    drawn = figures(entry, SimpleNamespace(unit="ng/mL", key="a"))
    assert "2 diluted QC results not drawn" in drawn["accuracy"]
    # nothing finite at all: the figure is still drawn (the limits), with the count
    entry["levels"] = entry["levels"][:1]
    assert "1 diluted QC result not drawn" in figures(entry, SimpleNamespace(unit="ng/mL", key="a"))["accuracy"]


# ----------------------------------------------------------------------------- 2/2b: rounded value vs limit
from validator.report.numbers import CriterionDisplay, criterion_value  # noqa: E402

_PERCENT_MAX = CriterionDisplay("carry-over", "%", "≤", "percent")
_PERCENT_WITHIN = CriterionDisplay("stability", "%", "within", "percent")
_RSD_MAX = CriterionDisplay("rsd", "%", "≤", "rsd")
_AT_LEAST = CriterionDisplay("fraction", "", "≥", "statistic")


@pytest.mark.parametrize("value, limit, display, passed, shown", [
    # hand computation: the rule's rounding (1 decimal for %, 2 s.f. for an RSD, 3 s.f. for a statistic),
    # and as many more significant figures as make the printed value read as the verdict says
    (20.0001, 20.0, _PERCENT_MAX, False, "20.0001"),        # hostile r2 #2: was "20.0 ≤ 20 NOT MET"
    (20.0, 20.0, _PERCENT_MAX, True, "20.0"),               # exactly the limit: met, as printed
    (19.96, 20.0, _PERCENT_MAX, True, "20.0"),              # rounds to the limit and is met: consistent
    (20.04, 20.0, _PERCENT_MAX, False, "20.04"),            # rounds to the limit but lies above it
    (20.4, 20.0, _PERCENT_MAX, False, "20.4"),              # clearly above: the rule alone
    (15.0001, (-15.0, 15.0), _PERCENT_WITHIN, False, "15.0001"),    # hostile r2 #2b, condition a
    (15.0, (-15.0, 15.0), _PERCENT_WITHIN, True, "15.0"),           # hostile r2 #2b, condition b
    (-15.00004, (-15.0, 15.0), _PERCENT_WITHIN, False, "-15.00004"),
    (2.555, 2.56, _RSD_MAX, True, "2.56"),                  # "2.6" would read as above a limit of 2.56
    (15.2, 15.0, _RSD_MAX, False, "15.2"),                  # "15" would read as the limit itself
    (0.6669, 0.667, _AT_LEAST, False, "0.6669"),            # "0.667" would read as at the limit
    (None, 20.0, _PERCENT_MAX, None, "n/a"),
    (20.0001, 20.0, _PERCENT_MAX, None, "20.0"),            # no verdict: nothing to contradict
])
def test_criterion_value_never_reads_as_the_other_verdict(value, limit, display, passed, shown):
    assert criterion_value(value, limit, display, passed) == shown


# ----------------------------------------------------------------------------- 11: -20 °C and 20 °C
from validator.inputs.sample_ids import spelling_variant  # noqa: E402
from validator.inputs.sector_names import lot_key, slug  # noqa: E402


def test_a_minus_sign_before_a_number_is_not_punctuation():
    # README (sector files): conditions differing in case or punctuation are one condition; a sign is not
    # punctuation (common practice, no published source: -20 °C and 20 °C are two storage conditions)
    assert slug("stored at -20 °C") == "stored-at-minus-20-c"
    assert slug("stored at 20 °C") == "stored-at-20-c"
    assert slug("stored at \u221220 °C") == "stored-at-minus-20-c"     # U+2212 MINUS SIGN, same condition
    assert slug("2.5 h") != slug("25 h") and slug("2.5 h") != slug("2 5 h")
    assert lot_key("-1") != lot_key("1") and lot_key("1.5") != lot_key("15")
    # the variants of one name are still one name
    assert slug("bench top") == slug("Bench-Top") == slug("bench_top") == "bench-top"
    assert len({lot_key(n) for n in ("d1", "d 1", "d-1", "d_1", "d.1", "d1.", "D-1")}) == 1
    assert spelling_variant(["stored at -20 °C", "stored at 20 °C"]) is None
    assert spelling_variant(["Run 1", "run  1"]) == (0, 1)


def test_stability_conditions_minus_20_and_20_are_two_conditions(tmp_path, outside):
    # hostile r2 #11: the reproduction's study (invented data, demo only; no value is checked but the ids)
    import json

    from conftest import CALIBRATION
    from validator.cli import main
    (tmp_path / "calibration.csv").write_text(CALIBRATION)
    (tmp_path / "stability.csv").write_text(
        "condition,nominal,found\n" + "".join(f"stored at -20 °C,10,{v}\n" for v in (10.1, 10.0, 9.9))
        + "".join(f"stored at 20 °C,10,{v}\n" for v in (12.1, 12.0, 12.2)))
    (tmp_path / "study.toml").write_text(
        '[study]\nid = "S"\ntitle = "t"\nconcentration_unit = "mg/L"\nresponse_unit = "uS"\n'
        '[calibration]\ndata = "calibration.csv"\nmodel = "linear"\n'
        '[stability]\ndata = "stability.csv"\nlimit_pct = 15\nmin_replicates = 3\n')
    assert main(["run", str(tmp_path / "study.toml"), "--out", str(outside / "o"), "--format", "json"]) in (0, 1)
    ids = [c["id"] for a in json.loads((outside / "o" / "results.json").read_text())["analytes"]
           for c in a["criteria"] if c["id"].startswith("stability-")]
    assert sorted(ids) == ["stability-stored-at-20-c-10", "stability-stored-at-minus-20-c-10"]
    # a hyphen typed for a space in the same data is still refused (one condition written two ways)
    text = (tmp_path / "stability.csv").read_text()
    (tmp_path / "stability.csv").write_text(text.replace("stored at 20 °C,10,12.1", "stored-at 20 °C,10,12.1"))
    assert main(["run", str(tmp_path / "study.toml"), "--out", str(outside / "o2"), "--format", "json"]) == 2


# ----------------------------------------------------------------------------- 12: s_WL claim below s_r claim
from pydantic import ValidationError  # noqa: E402

from validator.characteristics.precision.settings import PrecisionSection  # noqa: E402


@pytest.mark.parametrize("section", [
    {"levels": [{"level": 1, "claimed_repeatability_sd": 0.05, "claimed_within_laboratory_sd": 0.02}]},
    {"levels": [{"level": 1, "claimed_repeatability_rsd_pct": 5, "claimed_within_laboratory_rsd_pct": 2}]},
    {"claimed_repeatability_rsd_pct": 5, "claimed_within_laboratory_rsd_pct": 2},
    # the level's own repeatability claim with the section's within-laboratory claim
    {"claimed_within_laboratory_rsd_pct": 4, "levels": [{"level": 2, "claimed_repeatability_rsd_pct": 6}]},
])
def test_within_laboratory_claim_below_repeatability_claim_is_refused(section):
    # CLSI EP15-A3: the within-laboratory variance is the repeatability variance plus the between-day one,
    # so s_WL >= s_r (exact arithmetic)
    with pytest.raises(ValidationError) as e:
        PrecisionSection(**section)
    text = str(e.value)
    assert "claimed_within_laboratory_" in text and "claimed_repeatability_" in text and "is below" in text
    if "levels" in section and "claimed_repeatability_rsd_pct" not in section:
        assert f"level {section['levels'][0]['level']:g}" in text


def test_equal_claims_are_accepted():
    # no between-day component: s_WL = s_r is possible
    PrecisionSection(levels=[{"level": 1, "claimed_repeatability_sd": 0.05, "claimed_within_laboratory_sd": 0.05}])
    PrecisionSection(claimed_repeatability_rsd_pct=3, claimed_within_laboratory_rsd_pct=4)


# ----------------------------------------------------------------------------- 13: dot leader in the Contents text
def test_contents_leaders_only_on_list_entries():
    # the Contents page's introductory sentence links to the rounding rules; only the list entries get a
    # dot leader and page number (the rule's selector names the list item's own link)
    import re

    import tinycss2

    from conftest import REPO
    css = (REPO / "report_templates" / "dossier.css").read_text()
    selectors = []
    for rule in tinycss2.parse_stylesheet(css, skip_comments=True, skip_whitespace=True):
        rules = ([rule] if rule.type == "qualified-rule" else
                 tinycss2.parse_rule_list(rule.content, skip_comments=True, skip_whitespace=True)
                 if rule.type == "at-rule" and rule.content else [])
        for r in rules:
            if r.type == "qualified-rule" and "target-counter" in tinycss2.serialize(r.content):
                selectors.append(tinycss2.serialize(r.prelude).strip())
    assert selectors and all(re.search(r"\bli\s*>\s*a::after$", s) for s in selectors), selectors
    template = (REPO / "report_templates" / "dossier.html.j2").read_text()
    toc = template[template.index('<nav class="toc"'):template.index("<ol>", template.index('<nav class="toc"'))]
    assert '<a href="#rounding">' in toc          # the link in the sentence is not a list entry


# ----------------------------------------------------------------------------- 4: Ctrl-C and figure workers
def _worker_signals(_d):
    import os
    import signal
    return os.getpid(), signal.getsignal(signal.SIGINT), signal.getsignal(signal.SIGTERM)


def test_figure_workers_ignore_sigint(monkeypatch):
    # a terminal's Ctrl-C reaches the whole process group: the figure workers ignore it (the parent's
    # KeyboardInterrupt terminates them), so none prints a KeyboardInterrupt traceback
    import os
    import signal

    from validator.report import plots
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    got = plots.figures_for_all([{}, {}, {}], draw=_worker_signals)
    assert len(got) == 3 and all(pid != os.getpid() for pid, _, _ in got)
    assert all(i == signal.SIG_IGN and t == signal.SIG_DFL for _, i, t in got)


def test_a_ctrl_c_while_workers_start_is_held_for_the_run_not_lost():
    # the workers are started with SIGINT ignored and blocked here; an interrupt arriving meanwhile is
    # delivered to this process as soon as they have started (POSIX: a blocked signal stays pending)
    import os
    import signal

    from validator.report.plots import sigint_ignored_in_new_workers
    before = signal.getsignal(signal.SIGINT)
    with pytest.raises(KeyboardInterrupt):
        with sigint_ignored_in_new_workers():
            assert signal.getsignal(signal.SIGINT) == signal.SIG_IGN
            os.kill(os.getpid(), signal.SIGINT)
        for _ in range(1000):       # the Python-level handler runs between bytecodes
            pass
    assert signal.getsignal(signal.SIGINT) == before
    assert signal.SIGINT not in signal.pthread_sigmask(signal.SIG_BLOCK, set())


def test_pdf_layout_workers_ignore_sigint_from_birth():
    # spawned layout workers (fresh interpreters) report their SIGINT disposition and signal mask
    import signal

    from validator.report.pdf import _workers
    with _workers(2, start="spawn") as run:
        got = run(_spawned_signals, [0, 1])
    assert all(handler == signal.SIG_IGN and not blocked for handler, blocked in got)


def _spawned_signals(_task):
    import signal
    return signal.getsignal(signal.SIGINT), signal.SIGINT in signal.pthread_sigmask(signal.SIG_BLOCK, set())
