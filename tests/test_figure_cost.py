"""What a dossier figure costs to save, and that making it cheaper changed nothing saved.

``fig.tight_layout()`` leaves a placeholder layout engine on the figure, and matplotlib's
``savefig`` then draws the whole figure once more before drawing it for real (issue #14,
docs/performance.md, "Figures"). ``plots.svg`` drops the placeholder: one draw per saved format.
The expected draw counts are exact arithmetic (one per format); the expected files are matplotlib's
own output with the placeholder left in place (cross-check: matplotlib ``savefig``).
"""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import pytest  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from validator.report import plots  # noqa: E402


def _laid_out_figure():
    """A small two-panel figure in the house style, laid out with tight_layout as the dossier's are."""
    fig, (left, right) = plt.subplots(1, 2, figsize=(6.4, 3.2))
    plots.points(left, [0.005, 0.01, 0.05, 0.2], [120.0, 260.0, 1290.0, 5100.0], label="calibrators")
    left.set_xlabel("concentration (mg/kg)")
    left.set_ylabel("response (area)")
    left.set_title("whole range", fontsize=8, loc="left")
    plots.log_x(right, both=True)
    plots.points(right, [0.005, 0.01, 0.05, 0.2], [120.0, 260.0, 1290.0, 5100.0])
    fig.legend(frameon=False, fontsize=7, loc="lower center", ncol=3)
    fig.tight_layout(rect=(0, 0.12, 1, 1))
    return fig


def _count_draws(monkeypatch) -> list:
    calls = []
    draw = Figure.draw

    def counted(self, renderer):
        calls.append(type(renderer).__name__)
        return draw(self, renderer)
    monkeypatch.setattr(Figure, "draw", counted)
    return calls


@pytest.mark.parametrize("outputs, draws", [(("svg",), 1), (("svg", "png"), 2), (("png",), 1)])
def test_a_laid_out_figure_is_drawn_once_per_saved_format(monkeypatch, outputs, draws):
    with plots.style():
        fig = _laid_out_figure()
        calls = _count_draws(monkeypatch)
        plots._draw_as(outputs, lambda _: plots.svg(fig, "cost"), {})
    assert len(calls) == draws          # exact: one draw per format (matplotlib alone: two per format)


def _matplotlib_own(fig, name: str) -> tuple:
    """SVG text (as plots.svg post-processes it) and PNG bytes saved by matplotlib with the
    placeholder layout engine left on the figure."""
    assert fig.get_layout_engine() is not None          # what tight_layout leaves
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "validator", "Title": name})
    png = io.BytesIO()
    fig.savefig(png, format="png", dpi=plots.PRINT_DPI, metadata={"Software": None})
    return buf.getvalue(), png.getvalue()


def test_the_saved_files_are_those_matplotlib_saves_with_its_extra_draw():
    with plots.style():
        reference_svg, reference_png = _matplotlib_own(_laid_out_figure(), "same")
        drawn = plots._draw_as(("svg", "png"), lambda _: plots.svg(_laid_out_figure(), "same"), {})
    # cross-check: matplotlib savefig with the placeholder engine left in place, byte for byte
    assert drawn.png == reference_png
    assert str(drawn) == _post_processed(reference_svg, "same")


def _post_processed(text: str, name: str) -> str:
    """plots._svg_text's post-processing applied to matplotlib's own SVG text."""
    class Saved:
        def savefig(self, buf, **_):
            buf.write(text)
    return plots._svg_text(Saved(), name, close=False)


def test_a_users_autolayout_setting_does_not_bring_the_extra_draw_back(monkeypatch):
    with plots.style():
        plain = plots.svg(_laid_out_figure(), "rc")
        with matplotlib.rc_context({"figure.autolayout": True}):
            fig = _laid_out_figure()
            calls = _count_draws(monkeypatch)
            text = plots.svg(fig, "rc")
    assert len(calls) == 1
    assert text == plain            # the layout made by tight_layout is kept, not redone without its rect
