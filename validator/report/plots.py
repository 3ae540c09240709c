"""Dossier figures as deterministic inline SVG.

Plots are drawn from numbers the engine already computed (fitted curve,
bands, residuals, Q-Q coordinates, back-calculated deviations); nothing is
estimated here. Series are told apart by marker shape and line style as well
as colour, so the figures survive greyscale printing. The SVG is made
reproducible: fixed hash salt (stable element ids) and no date metadata.

Every text is drawn literally: units and names come from the user, so
matplotlib's mathtext (``$...$``) and TeX are switched off for all figures.
"""

from __future__ import annotations

import base64
import contextlib
import functools
import io
import os
import re


def _pyplot():
    """matplotlib's pyplot on the Agg backend, imported on first use: a run that draws no figure
    (``--format json``) does not pay the import (about 0.5 s), although the characteristics'
    presentation modules import this module."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


class _LazyPyplot:
    """``plt.x`` resolves ``matplotlib.pyplot.x`` at the call, importing pyplot then."""

    def __getattr__(self, name):
        return getattr(_pyplot(), name)


plt = _LazyPyplot()

__all__ = ["PALETTE", "Drawn", "analyte_figures", "figures_for_all", "style", "figure", "points", "svg", "log_x",
           "results_in_file_order"]

# the print version's raster figures: resolution (dots per inch) of the PNG drawn beside the SVG
PRINT_DPI = 150
# what ``svg()`` makes in this process: ("svg",) as a rule; figures_for_all sets it while drawing
_OUTPUTS = ("svg",)

# our own palette: blue / amber / plum / slate, distinguishable with common colour-vision deficiencies
PALETTE = {"ink": "#1d2430", "data": "#1f5a8c", "fit": "#1d2430", "conf": "#1f5a8c",
           "pred": "#b36b00", "bad": "#a1331f", "band": "#dbe6f0", "grid": "#d9dde3"}

_RC = {
    "svg.hashsalt": "validator-dossier",
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 8,
    "axes.edgecolor": PALETTE["ink"],
    "axes.labelcolor": PALETTE["ink"],
    "axes.grid": True,
    "grid.color": PALETTE["grid"],
    "grid.linewidth": 0.5,
    "xtick.color": PALETTE["ink"],
    "ytick.color": PALETTE["ink"],
    "axes.spines.top": False,
    "axes.spines.right": False,
    "figure.dpi": 100,
    # user-supplied units and names are literal text: "$\frac{$" is drawn as typed, never parsed
    "text.parse_math": False,
    "text.usetex": False,
}


def _points(ax, x, y, marker="o", colour=None, **kw):
    """Open markers: the house style for data points (legible in greyscale)."""
    ax.plot(x, y, marker, markersize=kw.pop("markersize", 3.5), markerfacecolor="white",
            markeredgecolor=colour or PALETTE["data"], **kw)


def style():
    """The house style (a matplotlib rc context) in which every dossier figure is drawn."""
    import matplotlib

    return matplotlib.rc_context(_RC)


def figure(nrows: int = 1, ncols: int = 1, **kw):
    """A new figure and its axes (``plt.subplots``), for a characteristic's presentation module."""
    return plt.subplots(nrows, ncols, **kw)


def points(ax, x, y, marker="o", colour=None, **kw):
    """Data points in the house style (open markers)."""
    _points(ax, x, y, marker, colour, **kw)


def results_in_file_order(fig, ax, *, what: str, unit: str, name: str) -> str:
    """The end of a figure of single results numbered in file order, with limits drawn as lines
    (limit of blank, method detection limit): axis labels, whole result numbers on the x axis, the
    legend to the right of the axes; laid out and returned as :func:`svg` (``name``: its ids).

    ``what``: the groups in the order they are numbered, e.g. "blanks, then low-level samples".
    """
    ax.set_xlabel(f"result number ({what}, in file order)")
    ax.set_ylabel(f"result ({unit})")
    ax.xaxis.get_major_locator().set_params(integer=True)      # result numbers are whole
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False, fontsize=7)
    fig.tight_layout()
    return svg(fig, name)


class Drawn(str):
    """A figure drawn for the screen and for print: the text is its inline SVG (empty when the HTML
    dossier is not written), ``png`` the same figure as PNG bytes (for the print version of a large
    dossier, whose layout is then much cheaper: see docs/performance.md)."""

    png: bytes = b""

    def print_tag(self) -> str:
        """The HTML of the print version: an ``img`` of the PNG (a data URI), else the SVG itself."""
        if not self.png:
            return str(self)
        return f'<img class="raster" alt="" src="data:image/png;base64,{base64.b64encode(self.png).decode("ascii")}">'


def svg(fig, name: str) -> str:
    """The figure as inline SVG text (closed afterwards); ``name`` makes its element ids unique.

    While :func:`figures_for_all` draws for print too, the value is a :class:`Drawn` (a ``str``)
    that also carries the PNG."""
    return _svg(fig, name)


def _without_layout_engine(fig) -> None:
    """Drop the placeholder layout engine that ``fig.tight_layout()`` leaves behind.

    The layout is done by then; the placeholder does nothing but makes every ``savefig`` draw the
    whole figure once more before drawing it for real (ticks, tick labels and text extents computed
    twice: about a quarter of a figure's cost, twice when it is saved as SVG and PNG). The saved
    files are the same without it."""
    import matplotlib
    from matplotlib.layout_engine import PlaceHolderLayoutEngine

    if isinstance(fig.get_layout_engine(), PlaceHolderLayoutEngine):
        # None means "no engine" only while these are off (a user's matplotlibrc may turn them on)
        with matplotlib.rc_context({"figure.autolayout": False, "figure.constrained_layout.use": False}):
            fig.set_layout_engine(None)


def _svg(fig, name: str) -> str:
    _without_layout_engine(fig)
    if _OUTPUTS == ("svg",):
        return _svg_text(fig, name)
    drawn = Drawn(_svg_text(fig, name, close=False) if "svg" in _OUTPUTS else "")
    if "png" in _OUTPUTS:
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=PRINT_DPI, metadata={"Software": None})
        drawn.png = buf.getvalue()
    plt.close(fig)
    return drawn


def _svg_text(fig, name: str, close: bool = True) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "validator", "Title": name})
    if close:
        plt.close(fig)
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    # unique ids per figure so that several inline SVGs never share an id
    prefix = re.sub(r"[^A-Za-z0-9]", "", name)
    text = re.sub(r'id="([^"]+)"', lambda m: f'id="{prefix}-{m.group(1)}"', text)
    text = re.sub(r'url\(#([^)]+)\)', lambda m: f'url(#{prefix}-{m.group(1)})', text)
    text = re.sub(r'xlink:href="#([^"]+)"', lambda m: f'xlink:href="#{prefix}-{m.group(1)}"', text)
    return re.sub(r"\s+width=\"[^\"]+\"\s+height=\"[^\"]+\"", ' width="100%"', text, count=1)


def _log_x(ax, both: bool = False) -> None:
    """Log scale with plain numeric tick labels (0.1, 1, 10: mathtext is switched off for user text)."""
    from matplotlib.ticker import FuncFormatter, NullFormatter

    for axis, scale in ((ax.xaxis, ax.set_xscale), (ax.yaxis, ax.set_yscale))[:2 if both else 1]:
        scale("log")
        axis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        axis.set_minor_formatter(NullFormatter())


log_x = _log_x      # for the characteristics' figures


def _wide(values) -> bool:
    """Whether positive values span more than a decade (a log axis then shows the low end)."""
    positive = [v for v in values if v is not None and v > 0]
    return bool(positive) and max(positive) > 10 * min(positive)


def _positive(xs, *series):
    """The points where x and every series are positive (for log axes)."""
    keep = [i for i, x in enumerate(xs) if x > 0 and all(s[i] is not None and s[i] > 0 for s in series)]
    return [xs[i] for i in keep], *[[s[i] for i in keep] for s in series]


def _draw_calibration(ax, d: dict, labels: bool) -> None:
    grid = d["grid"]
    if ax.get_xscale() == "log":
        grid, pred_low, pred_high, conf_low, conf_high, fit = _positive(
            grid, d["pred_low"], d["pred_high"], d["conf_low"], d["conf_high"], d["fit"])
        x, y = _positive(d["x"], d["y"])
        out_x, out_y = _positive(d["outliers_x"], d["outliers_y"])
    else:
        pred_low, pred_high, conf_low, conf_high, fit = (d["pred_low"], d["pred_high"], d["conf_low"],
                                                          d["conf_high"], d["fit"])
        x, y, out_x, out_y = d["x"], d["y"], d["outliers_x"], d["outliers_y"]
    label = (lambda text: text) if labels else (lambda text: None)
    ax.fill_between(grid, pred_low, pred_high, color=PALETTE["band"], alpha=0.6, linewidth=0,
                    label=label(f"{d['level']} prediction band"))
    ax.plot(grid, pred_low, ":", color=PALETTE["pred"], linewidth=1)
    ax.plot(grid, pred_high, ":", color=PALETTE["pred"], linewidth=1)
    ax.plot(grid, conf_low, "--", color=PALETTE["conf"], linewidth=1, label=label(f"{d['level']} confidence band"))
    ax.plot(grid, conf_high, "--", color=PALETTE["conf"], linewidth=1)
    ax.plot(grid, fit, "-", color=PALETTE["fit"], linewidth=1.4, label=label("fitted function"))
    _points(ax, x, y, "o", markersize=4, markeredgewidth=1.2, label=label("calibrators"))
    if out_x:
        ax.plot(out_x, out_y, "x", markersize=8, color=PALETTE["bad"], markeredgewidth=1.5,
                label=label("flagged calibrator"))
    ax.set_xlabel(f"concentration ({d['xunit']})")
    ax.set_ylabel(f"response ({d['yunit']})")


def _calibration_figure(d: dict) -> str:
    """The fit over the whole range; beside it, for a range over a decade, the same on log axes so that
    the low levels (where weighting matters) can be seen. The legend sits below the axes."""
    low_view = _wide(d["x"])
    # half the text width in the dossier, beside the diagnostics (figsize in inches, text at 8 pt)
    fig, axes = plt.subplots(1, 2 if low_view else 1, figsize=(4.2, 2.9), squeeze=False)
    _draw_calibration(axes[0, 0], d, labels=True)
    axes[0, 0].set_title("whole range", fontsize=8, loc="left")
    if low_view:
        ax = axes[0, 1]
        _log_x(ax, both=True)
        _draw_calibration(ax, d, labels=False)
        ax.set_title("log axes: the low levels", fontsize=8, loc="left")
    # the band's legend key drawn as the band is: its fill and its dotted edges (the filled area alone
    # has no edge, so its own key would show a plain fill)
    from matplotlib.patches import Patch

    handles, texts = axes[0, 0].get_legend_handles_labels()
    band = texts.index(f"{d['level']} prediction band")
    handles[band] = Patch(facecolor=PALETTE["band"], alpha=0.6, edgecolor=PALETTE["pred"], ls=":", lw=1)
    fig.legend(handles, texts, frameon=False, fontsize=7, loc="lower center", ncol=2)
    fig.tight_layout(rect=(0, 0.17, 1, 1))
    return _svg(fig, f"cal{d['key']}")


def _diagnostic_figure(d: dict) -> str:
    fig, axes = plt.subplots(2, 2, figsize=(4.2, 3.3))     # half the text width, beside the fit
    ax = axes[0, 0]
    ax.axhline(0, color=PALETTE["ink"], linewidth=0.8)
    _points(ax, d["x"], d["residuals"], "o")
    ax.set_title("residuals", fontsize=8, loc="left")
    ax.set_xlabel(f"concentration ({d['xunit']})")
    ax.set_ylabel(f"response ({d['yunit']})")
    ax = axes[0, 1]
    ax.axhline(0, color=PALETTE["ink"], linewidth=0.8)
    _points(ax, d["rel_x"], d["rel_residuals"], "s")
    ax.set_title("relative residuals", fontsize=8, loc="left")
    ax.set_xlabel(f"concentration ({d['xunit']})")
    ax.set_ylabel("% of fitted response")
    ax = axes[1, 0]
    _points(ax, d["qq_theoretical"], d["qq_ordered"], "o")
    if d["qq_line"]:
        lo, hi = min(d["qq_theoretical"]), max(d["qq_theoretical"])
        a, b = d["qq_line"]
        ax.plot([lo, hi], [a + b * lo, a + b * hi], "--", color=PALETTE["ink"], linewidth=0.8)
    ax.set_title("normal Q-Q, scaled residuals", fontsize=8, loc="left")
    ax.set_xlabel("theoretical normal quantile")
    ax.set_ylabel("ordered residual")
    ax = axes[1, 1]
    xs, tols = d["bc_x"], d["bc_tol"]
    if _wide(xs):
        _log_x(ax)
    if xs:
        # the tolerance of each level as a band over its concentration (numeric axis, levels in order)
        levels = sorted({(x, t) for x, t in zip(xs, tols)})
        ax.fill_between([x for x, _ in levels], [-t for _, t in levels], [t for _, t in levels], step="mid",
                        color=PALETTE["band"], linewidth=0, label="tolerance")
    ok = [(x, v) for x, v, p in zip(xs, d["bc_dev"], d["bc_pass"]) if p]
    bad = [(x, v) for x, v, p in zip(xs, d["bc_dev"], d["bc_pass"]) if p is False]
    if ok:
        _points(ax, *zip(*ok), "o", label="within tolerance")
    if bad:
        ax.plot(*zip(*bad), "x", markersize=6, color=PALETTE["bad"], markeredgewidth=1.4, label="outside tolerance")
    ax.axhline(0, color=PALETTE["ink"], linewidth=0.8)
    ax.set_title("back-calculated deviation", fontsize=8, loc="left")
    ax.set_xlabel(f"nominal ({d['xunit']})")
    ax.set_ylabel("% deviation")
    if _wide(d["x"]):
        for a in (axes[0, 0], axes[0, 1]):
            if all(v > 0 for v in (d["x"] if a is axes[0, 0] else d["rel_x"])):
                _log_x(a)
    fig.tight_layout()
    return _svg(fig, f"diag{d['key']}")


def _precision_figure(d: dict) -> str:
    fig, ax = plt.subplots(figsize=(3.4, 2.3))     # a third of the text width in the dossier
    markers = "osD^v<>p*h"
    names = list(dict.fromkeys(series for lv in d["precision"] for series, _ in lv["series"]))
    labelled = set()
    for i, lv in enumerate(d["precision"]):
        for series, values in lv["series"]:
            j = names.index(series)
            xs = [i + (j - (len(names) - 1) / 2) * 0.12] * len(values)
            _points(ax, xs, values, markers[j % len(markers)],
                    colour=PALETTE["data"] if j % 2 == 0 else PALETTE["pred"],
                    label=None if series in labelled else series)
            labelled.add(series)
    ax.axhline(100, color=PALETTE["ink"], linewidth=0.6, ls=":")
    ax.set_xticks(range(len(d["precision"])))
    ax.set_xticklabels([f"{lv['level']:g}" for lv in d["precision"]])
    ax.set_xlabel(f"level ({d['xunit']})")
    ax.set_ylabel("% of level mean")
    ax.set_title("precision results by series", fontsize=8, loc="left")
    if len(names) <= 12:     # beyond that a legend would cover the panel; the caption explains the markers
        ax.legend(frameon=False, fontsize=6, title="series", title_fontsize=6,
                  loc="upper left", bbox_to_anchor=(1.0, 1.0))
    fig.tight_layout()
    return _svg(fig, f"tp{d['key']}")


def analyte_figures(d: dict) -> dict:
    with style():
        figs = {"calibration": _calibration_figure(d), "diagnostics": _diagnostic_figure(d)}
        if d.get("precision"):
            figs["precision"] = _precision_figure(d)
        return figs


@contextlib.contextmanager
def sigint_ignored_in_new_workers():
    """Start worker processes inside this: they are born with SIGINT ignored, so a terminal's Ctrl-C
    (sent to the whole process group) cannot raise KeyboardInterrupt in a worker that is still starting
    (a spawned interpreter importing, a forked one before its initializer), which would print a
    traceback. SIGINT is blocked in this process meanwhile, so an interrupt that arrives then is held
    and delivered here when the block ends, never lost. (A blocked signal is kept pending on Linux even
    while ignored; the workers inherit the block and the disposition and lift the block themselves.)"""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    mask = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
    handler = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, handler)
        signal.pthread_sigmask(signal.SIG_SETMASK, mask)


def _sigint_off() -> None:
    """In a worker: SIGINT ignored and no longer blocked (see :func:`sigint_ignored_in_new_workers`)."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT})


def _die_with_parent(parent: int) -> None:
    """Worker start-up: end this worker when the run that forked it ends, however it ends.

    A forked worker inherits the run's open files, among them the lock on the
    output folder; a worker outliving a killed run would keep that lock and
    refuse every later run into the folder. Linux's PR_SET_PDEATHSIG sends the
    worker SIGKILL when its parent dies; elsewhere the check below is the best
    that can be done.
    """
    import ctypes
    import signal

    try:
        ctypes.CDLL(None, use_errno=True).prctl(1, int(signal.SIGKILL), 0, 0, 0)   # PR_SET_PDEATHSIG = 1
    except (OSError, AttributeError):
        pass
    if os.getppid() != parent:          # the parent died before the call above took effect
        os._exit(1)


def _draw_as(outputs: tuple, draw, d: dict):
    """``draw(d)`` with :func:`svg` making ``outputs`` (in a worker process, or restored afterwards)."""
    global _OUTPUTS
    before, _OUTPUTS = _OUTPUTS, outputs
    try:
        return draw(d)
    finally:
        _OUTPUTS = before


def figures_for_all(plot_data: list, draw=analyte_figures, on_done=None, outputs=("svg",)) -> list:
    """``draw(d)`` (the figures of one analyte) for every analyte; two processes when there are several.

    ``draw`` must be a module-level function (it is sent to the worker processes by name);
    ``on_done(done, total)``, if given, is called in this process as each analyte's figures arrive.
    ``outputs``: ``("svg",)`` (inline SVG text), or any of "svg" and "png" (each figure a
    :class:`Drawn`, drawn once and saved in both formats).
    """
    _pyplot()       # imported once here, before the workers are forked, not once in each
    if tuple(outputs) != ("svg",):
        draw = functools.partial(_draw_as, tuple(outputs), draw)
    done = []

    def collect(figures):
        for f in figures:
            done.append(f)
            if on_done is not None:
                on_done(len(done), len(plot_data))
        return done

    if len(plot_data) >= 2 and (os.cpu_count() or 1) > 1:
        import multiprocessing
        pool = None
        try:
            with sigint_ignored_in_new_workers():
                pool = multiprocessing.get_context("fork").Pool(processes=2, initializer=_figure_worker_start,
                                                                initargs=(os.getpid(),))
            out = collect(pool.imap(draw, plot_data))
            pool.close()
            return out
        finally:    # whatever ends the wait (Ctrl-C, SIGTERM, an error): no worker outlives it
            if pool is not None:
                pool.terminate()
                pool.join()
    return collect(draw(d) for d in plot_data)


def _figure_worker_start(parent: int) -> None:
    """A figure worker: SIGINT ignored (a terminal's Ctrl-C reaches the whole process group; the run's
    own interrupt unwinds the parent, which terminates the workers, so no worker prints a traceback),
    default SIGTERM (die at once when terminated), and ended with its parent (:func:`_die_with_parent`)."""
    import signal

    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    _sigint_off()
    _die_with_parent(parent)
