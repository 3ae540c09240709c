"""Top-down measurement uncertainty from validation data (Nordtest TR 537 approach).

The within-laboratory reproducibility u(Rw) and the uncertainty of the bias
u(bias) are combined into u_c = sqrt(u(Rw)^2 + u(bias)^2) and expanded with a
stated coverage factor. Every component carries its source so that the budget
can be shown as it was built. All components of one budget are in the same
unit: either relative (% of the value) or absolute (the result's unit).

Nothing here reads files or formats text. Invalid parameters raise
:class:`ValueError` quoting the value and the allowed range.

References
----------
.. [Nordtest] Magnusson, B., Naeykki, T., Hovind, H., Krysell, M. and
   Sahlin, E. (2017). Handbook for calculation of measurement uncertainty in
   environmental laboratories, Nordtest report TR 537, edition 4 (u(Rw),
   u(bias) = sqrt(RMS_bias^2 + u(Cref)^2), u_c, U = 2 u_c).
.. [Eurachem] Ellison, S. L. R. and Williams, A. (eds) (2012).
   Eurachem/CITAC Guide: Quantifying Uncertainty in Analytical Measurement,
   3rd ed. (use of validation data; coverage factor).
.. [ISO17025] ISO/IEC 17025:2017, clause 7.6 (evaluation of measurement uncertainty).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._common import positive

__all__ = ["UncertaintyComponent", "BiasUncertainty", "UncertaintyBudget", "reproducibility_component",
           "bias_uncertainty", "combined_uncertainty"]


@dataclass(frozen=True)
class UncertaintyComponent:
    """A standard uncertainty, relative (in %) or absolute, with where it comes from."""

    name: str
    standard_uncertainty: float
    relative: bool
    source: str


@dataclass(frozen=True)
class BiasUncertainty:
    """u(bias) and its parts: the root mean square of the biases and u(Cref)."""

    rms_bias: float
    reference_uncertainty: float
    n: int
    component: UncertaintyComponent


@dataclass(frozen=True)
class UncertaintyBudget:
    """Combined and expanded uncertainty with the components it was built from.

    ``combined``/``expanded`` are in the components' unit (``relative``: %);
    the ``*_absolute`` and ``*_relative`` forms need ``value`` (the measured
    value or level the budget applies to) and are ``None`` without it.
    """

    components: tuple[UncertaintyComponent, ...]
    relative: bool
    combined: float
    coverage_factor: float
    expanded: float
    value: float | None
    combined_absolute: float | None
    expanded_absolute: float | None
    combined_relative: float | None
    expanded_relative: float | None


def _nonneg(name, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a finite number >= 0, got {value!r}") from None
    if not (math.isfinite(v) and v >= 0):
        raise ValueError(f"{name} must be a finite number >= 0, got {value!r}")
    return v


def reproducibility_component(sd: float, *, mean: float | None = None,
                              source: str = "intermediate precision SD") -> UncertaintyComponent:
    """u(Rw) from a within-laboratory reproducibility (intermediate precision) SD.

    Notes
    -----
    u(Rw) = s_Rw ([Nordtest] section 5). With ``mean`` given it is made
    relative: u(Rw) = 100 s_Rw / |mean| %. The SD should come from results
    over a long enough period (different days, analysts, calibrations), e.g.
    the intermediate precision of
    :func:`validator.maths.variance_components.nested_variance_components` or a
    control chart.
    """
    s = _nonneg("sd", sd)
    if mean is None:
        return UncertaintyComponent("u(Rw)", s, False, source)
    try:
        m = float(mean)
    except (TypeError, ValueError):
        raise ValueError(f"mean must be a finite non-zero number, got {mean!r}") from None
    if not math.isfinite(m) or m == 0.0:
        raise ValueError(f"mean must be a finite non-zero number, got {mean!r}")
    return UncertaintyComponent("u(Rw)", 100.0 * s / abs(m), True, source)


def bias_uncertainty(biases, reference_uncertainties, *, relative: bool = True,
                     source: str = "reference materials / recovery") -> BiasUncertainty:
    """u(bias) from biases found on reference materials or recovery samples ([Nordtest] section 6).

    Parameters
    ----------
    biases : sequence of float
        One bias per reference material or spiked sample: found - reference
        (absolute) or (found - reference) / reference * 100 (relative, %); for
        a recovery R in %, the bias is R - 100.
    reference_uncertainties : float or sequence of float
        The standard uncertainty u(Cref) of each reference value (certificate
        U / k, or the uncertainty of the spike), in the same unit; one number
        applies to all.
    relative : bool
        Whether the values are relative (%) or absolute.

    Notes
    -----
    RMS_bias = sqrt(sum bias_i^2 / n); u(Cref) = mean of the u(Cref_i);
    u(bias) = sqrt(RMS_bias^2 + u(Cref)^2) [Nordtest]. With a single
    reference material the bias is itself the mean of replicates; its
    standard error is not added here (state it in ``reference_uncertainties``
    if the bias is from few replicates).
    """
    try:
        b = np.asarray(biases, dtype=float).ravel()
        u = np.asarray(reference_uncertainties, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ValueError(f"biases and reference_uncertainties must be numbers, got {biases!r} and "
                         f"{reference_uncertainties!r}") from None
    if b.size == 0 or not np.all(np.isfinite(b)):
        raise ValueError(f"biases must be one or more finite numbers, got {biases!r}")
    if u.size not in (1, b.size) or not np.all(np.isfinite(u)) or np.any(u < 0):
        raise ValueError(f"reference_uncertainties must be one finite number >= 0 or one per bias "
                         f"({b.size}), got {reference_uncertainties!r}")
    rms = math.sqrt(float(np.mean(b * b)))
    u_ref = float(np.mean(u))
    value = math.hypot(rms, u_ref)
    return BiasUncertainty(rms, u_ref, int(b.size),
                           UncertaintyComponent("u(bias)", value, bool(relative), source))


def combined_uncertainty(components, *, coverage_factor: float = 2.0,
                         value: float | None = None) -> UncertaintyBudget:
    """Combined standard uncertainty and expanded uncertainty from independent components.

    Parameters
    ----------
    components : sequence of UncertaintyComponent
        Usually u(Rw) and u(bias); all relative or all absolute.
    coverage_factor : float
        k of U = k u_c, > 0 (2 is the usual choice when u_c has many degrees
        of freedom and the distribution is close to normal [Eurachem]).
    value : float, optional
        The value (level) the budget applies to, to give both absolute and
        relative forms.

    Notes
    -----
    u_c = sqrt(sum u_i^2) (components independent), U = k u_c [Nordtest],
    [Eurachem]. Relative to absolute: u = u_rel / 100 * |value|; absolute to
    relative: u_rel = 100 u / |value|.
    """
    comps = tuple(components)
    if not comps or not all(isinstance(c, UncertaintyComponent) for c in comps):
        raise ValueError(f"components must be one or more UncertaintyComponent, got {components!r}")
    kinds = {c.relative for c in comps}
    if len(kinds) != 1:
        raise ValueError("components must be all relative or all absolute, got "
                         + ", ".join(f"{c.name} ({'relative' if c.relative else 'absolute'})" for c in comps))
    relative = kinds.pop()
    k = positive("coverage_factor", coverage_factor)
    u_c = math.sqrt(sum(c.standard_uncertainty ** 2 for c in comps))
    expanded = k * u_c
    if value is None:
        v = None
        abs_pair = (None, None) if relative else (u_c, expanded)
        rel_pair = (u_c, expanded) if relative else (None, None)
    else:
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise ValueError(f"value must be a finite number, got {value!r}") from None
        if not math.isfinite(v) or (not relative and v == 0.0):
            raise ValueError(f"value must be a finite {'non-zero ' if not relative else ''}number, got {value!r}")
        if relative:
            rel_pair = (u_c, expanded)
            abs_pair = (u_c / 100.0 * abs(v), expanded / 100.0 * abs(v))
        else:
            abs_pair = (u_c, expanded)
            rel_pair = (100.0 * u_c / abs(v), 100.0 * expanded / abs(v))
    return UncertaintyBudget(comps, relative, u_c, k, expanded, v, abs_pair[0], abs_pair[1], rel_pair[0],
                             rel_pair[1])
