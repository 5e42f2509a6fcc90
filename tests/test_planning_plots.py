"""Figures: what they label, deterministic bytes, the page of OC curves for the tables."""

import matplotlib
import pytest

import exactband
from exactband import plots
from exactband.oc import PlanningError, operating_characteristics
from exactband.planning import plan, power_against_n


@pytest.fixture(scope="module")
def band():
    return exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)


def texts(fig):
    out = []
    for t in fig.findobj(matplotlib.text.Text):
        out.append(t.get_text())
    return "\n".join(out)


def test_oc_figure_labels(band):
    fig = plots.oc_figure(band, operating_characteristics(band, points=41))
    words = texts(fig)
    for needle in ("randomised rule", "conservative rule", "field rule (3 random digits)",
                   "null region (H0)", "alpha = 0.05", "rate \u03b8 (counts per unit of exposure)",
                   "probability of rejecting H0 (power)", "c1 = 39", "exposure n = 25"):
        assert needle in words, needle
    ax = fig.axes[0]
    styles = {line.get_label(): (line.get_linestyle(), line.get_marker())
              for line in ax.get_lines() if "rule" in line.get_label()}
    assert len(set(styles.values())) == 3  # apart by line style and marker, not colour alone


def test_bytes_are_deterministic(band):
    f = operating_characteristics(band, points=41)
    a = plots.figure_bytes(plots.oc_figure(band, f), "svg")
    b = plots.figure_bytes(plots.oc_figure(band, f), "svg")
    assert a == b and b"<svg" in a
    assert plots.figure_bytes(plots.oc_figure(band, f), "png") == plots.figure_bytes(
        plots.oc_figure(band, f), "png")
    p1 = plots.figure_bytes(plots.oc_figure(band, f), "pdf")
    assert p1 == plots.figure_bytes(plots.oc_figure(band, f), "pdf") and p1[:4] == b"%PDF"


def test_plan_figure_marks_the_answers():
    r = plan("binomial", "upper", alpha=0.05, value=0.1, alternatives=[0.25], target=0.9,
             rule="conservative", verify=False)
    assert r.n != r.n_from
    fig = plots.plan_figure(r, power_against_n(r))
    words = texts(fig)
    assert f"n = {r.n} (smallest n meeting the target)" in words
    assert f"n_from = {r.n_from} (every larger n meets it)" in words
    assert "target power 0.9" in words and "number of trials n" in words


def test_oc_pages_for_one_band():
    ds = [exactband.design("poisson", "band", n=n, low=2, high=2.5, alpha=a, verify=False)
          for a in (0.05, 0.01) for n in (10, 25, 50, 100, 200)]
    pages = plots.oc_pages(ds, n_per_chart=4, charts_per_page=3, paper="Letter")
    # per alpha: 5 values of n -> charts of 4 + 1 -> 4 rows in all -> pages of 3 + 1
    assert len(pages) == 2
    assert tuple(round(x, 2) for x in pages[0].get_size_inches()) == (8.5, 11.0)
    assert len(pages[0].axes) == 3 * 2 and len(pages[1].axes) == 1 * 2
    words = texts(pages[0])
    assert "n = 100" in words and "alpha = 0.01" in words and "page 1" in words
    assert plots.figure_bytes(pages[1], "png")[:4] == b"\x89PNG"
    other = exactband.design("poisson", "band", n=25, low=2, high=3, alpha=0.05, verify=False)
    with pytest.raises(PlanningError, match="one hypothesis"):
        plots.oc_pages([ds[0], other])
    with pytest.raises(PlanningError, match="paper"):
        plots.oc_pages(ds, paper="A3")


def test_plot_path_checked(tmp_path):
    for bad in ("x.pdf", "x", "x.png.txt"):
        with pytest.raises(PlanningError, match="invalid plot"):
            plots.check_plot_path(tmp_path / bad)
    assert plots.check_plot_path(tmp_path / "A.PNG").suffix == ".PNG"
