"""The PNG plots exist, are valid PNG images of the expected size, and are named per output."""

from __future__ import annotations

from pathlib import Path

import pytest
from PIL import Image

from budget.report import plots
from budget.report.files import write_reports

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def assert_png(path: Path) -> None:
    assert path.read_bytes()[:8] == PNG_SIGNATURE, path
    with Image.open(path) as im:
        im.verify()
    with Image.open(path) as im:
        w, h = im.size
        assert im.format == "PNG" and w >= 800 and h >= 500, (path, im.size)
        # a real picture, not a blank canvas
        lo, hi = im.convert("L").getextrema()
        assert hi - lo > 100, path


def test_gauge_plots_are_written(gauge, tmp_path):
    folder = tmp_path / "plots"  # made by write_reports
    written = write_reports(gauge, plots=folder)
    names = sorted(p.name for p in written)
    want = sorted([f"{ob.name}_{kind}.png" for ob in gauge.outputs for kind in ("monte_carlo", "pareto")]
                  + ["expanded_uncertainty.png"])
    assert names == want
    assert sorted(p.name for p in folder.iterdir()) == want  # no temporary files left
    for p in written:
        assert_png(p)


def test_sweep_plan_has_the_residuals_and_the_range(sweep):
    names = [name for name, _ in plots.plot_plan(sweep)]
    assert "sweep_residuals.png" in names and "expanded_uncertainty.png" in names
    assert "gain_monte_carlo.png" in names and "intercept_pareto.png" in names
    assert len(names) == 2 * len(sweep.outputs) + 2


@pytest.mark.parametrize("draw", ["sweep_residuals", "expanded_uncertainty", "gain_histogram"])
def test_sweep_plots_are_valid_pngs(sweep, tmp_path, draw):
    path = tmp_path / f"{draw}.png"
    if draw == "gain_histogram":
        plots.mc_histogram(sweep.gain, path)
    else:
        getattr(plots, draw)(sweep, path)
    assert_png(path)


def test_histogram_with_a_finite_nu_draws_the_scaled_t(type_a, tmp_path):
    ob = type_a.angles[0]
    x = plots.np.linspace(ob.linear.estimate - 3 * ob.linear.u, ob.linear.estimate + 3 * ob.linear.u, 7)
    pdf, label = plots._linear_pdf(ob, x)
    assert "scaled t" in label and f"{ob.linear.nu_eff:g}" in label
    assert abs(pdf.sum() * (x[1] - x[0]) - 1) < 0.1  # roughly a density
    path = tmp_path / "t.png"
    plots.mc_histogram(ob, path)
    assert_png(path)


def test_pyplot_is_not_imported(gauge, tmp_path):
    """The plots leave the caller's matplotlib state alone (no pyplot, no backend switch)."""
    import sys

    had = "matplotlib.pyplot" in sys.modules
    plots.pareto(gauge.angles[0], tmp_path / "p.png")
    assert ("matplotlib.pyplot" in sys.modules) == had
