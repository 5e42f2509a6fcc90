"""Figures of operating characteristics and of power against n (matplotlib, no display).

Figures are built with the object interface (``matplotlib.figure.Figure``), so
nothing touches pyplot's global state or a display.  The three rules differ in
line style, marker and lightness, so they stay apart in greyscale print.
``figure_bytes`` gives deterministic PNG / SVG / PDF bytes (fixed SVG hash salt,
no dates in the metadata).  The figures draw data computed elsewhere
(``oc.operating_characteristics``, ``planning.power_against_n``).
"""

from __future__ import annotations

import io
import math
from pathlib import Path

from .design import DEFAULT_RANDOM_DIGITS, Design
from .errors import invalid
from .figfooter import add_footer
from .numtext import number_text
from .oc import PlanningError, one_hypothesis, operating_characteristics, rule_label

FORMATS = ("png", "svg")
PAGE_INCHES = {"A4": (8.27, 11.69), "Letter": (8.5, 11.0)}
# randomised: solid black; conservative: dashed blue, circles; field digits: dash-dot
# orange, triangles.  Lightness 0 / ~0.4 / ~0.65 keeps them apart in greyscale too.
STYLE = {
    "randomised": dict(color="black", linestyle="-", linewidth=2.0, marker=None, zorder=3),
    "conservative": dict(color="#0072B2", linestyle=(0, (6, 3)), linewidth=1.5, marker="o",
                         markersize=4.5, markerfacecolor="white", zorder=4),
    "digits": dict(color="#E69F00", linestyle=(0, (6, 2, 1.5, 2)), linewidth=1.5, marker="^",
                   markersize=5, zorder=5),
}
N_STYLES = [dict(linestyle="-", marker=None, color="black", linewidth=1.8),
            dict(linestyle=(0, (6, 3)), marker="o", color="#0072B2", markerfacecolor="white"),
            dict(linestyle=(0, (6, 2, 1.5, 2)), marker="^", color="#E69F00"),
            dict(linestyle=(0, (1.5, 1.5)), marker="s", color="#555555", markerfacecolor="white"),
            dict(linestyle=(0, (10, 2)), marker="D", color="#009E73"),
            dict(linestyle=(0, (3, 1, 1, 1, 1, 1)), marker="v", color="#CC79A7",
                 markerfacecolor="white")]
SHORT_RULE = {"randomised": "randomised rule", "conservative": "conservative rule",
              "digits": "field rule ({d} digits)"}  # chart titles; the page explains them
NULL_SHADE = dict(color="0.88", zorder=0, linewidth=0)


def check_plot_path(path) -> Path:
    """A plot file name ending in .png or .svg (checked before any work is done)."""
    p = Path(str(path))
    ext = p.suffix.lower().lstrip(".")
    if ext not in FORMATS:
        raise invalid("plot", str(path), "the file name must end in .png or .svg", PlanningError)
    if p.exists() and p.is_dir():
        raise invalid("plot", str(path), "a file name is required, not a folder", PlanningError)
    return p


def figure_bytes(fig, fmt: str, dpi: int = 150) -> bytes:
    """Deterministic bytes of a figure: png, svg or pdf."""
    import matplotlib

    fmt = fmt.lower()
    meta = {"png": {"Software": None}, "svg": {"Date": None, "Creator": None},
            "pdf": {"CreationDate": None, "ModDate": None, "Producer": None,
                    "Creator": None}}.get(fmt)
    if meta is None:
        raise invalid("format", fmt, "png, svg or pdf", PlanningError)
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "exactband", "svg.fonttype": "none"}):
        fig.savefig(buf, format=fmt, dpi=dpi, metadata=meta)
    return buf.getvalue()


def save_figure(fig, path) -> Path:
    """Write a figure to PATH (.png or .svg) atomically."""
    from .fileio import atomic_write_bytes

    p = check_plot_path(path)
    atomic_write_bytes(p, figure_bytes(fig, p.suffix.lower().lstrip(".")))
    return p


def _new_figure(size):
    from matplotlib.figure import Figure

    return Figure(figsize=size, layout="constrained")


# -- words --------------------------------------------------------------------------
def pretty(text: str) -> str:
    """Typographic comparison signs for figure text."""
    return text.replace("<=", "\u2264").replace(">=", "\u2265")


def theta_axis_label(design: Design) -> str:
    fam = design.problem.family
    return f"{fam.axis_word} ({fam.theta_unit})"


def _g(x, exact=None, random_digits=None):
    """A gamma truncated, never rounded: its first d decimals are the threshold."""
    from .words import gamma_text

    return "-" if x is None else gamma_text(x, exact, random_digits, places=4)


def design_caption(design: Design, random_digits: int | None = None) -> str:
    """One paragraph naming the design: family, kind, H0, n, alpha, cutoffs, gammas."""
    fam = design.problem.family
    disp = (f", {fam.dispersion_word} = {number_text(design.dispersion)}"
            if design.dispersion is not None else "")
    parts = [f"{design.problem.kind.optimality} {design.kind} test, {fam.name} family{disp}; "
             f"{pretty(design.hypothesis())}; {fam.n_word} = {number_text(design.n)}; "
             f"alpha = {number_text(design.alpha)}."]
    if not fam.discrete:  # real cutoffs, nothing randomised
        cuts = [f"c{i} = {c!r}" for i, c in ((1, design.c1), (2, design.c2)) if c is not None]
        parts.append("; ".join(cuts) + " (real cutoffs, no randomisation).")
        random_digits = None
    else:
        parts.append(_cutoff_text(design, random_digits))
    if random_digits:
        t1, t2 = design.thresholds(random_digits)
        ts = [f"t{i} = {t} at c{i}" for i, t in ((1, t1), (2, t2)) if t is not None]
        parts.append(f"Field rule: at a cutoff read {random_digits} random digits as a number "
                     f"and reject if it is below the threshold ({', '.join(ts)}).")
    if not design.verified:
        parts.append("(Not verified by the high-precision solver.)")
    return " ".join(parts)


def _cutoff_text(design: Design, random_digits=None) -> str:
    cut = []
    if design.c1 is not None:
        cut.append(f"c1 = {design.c1}, gamma1 = "
                   f"{_g(design.gamma1, design.gamma1_decimal, random_digits)}")
    if design.c2 is not None:
        cut.append(f"c2 = {design.c2}, gamma2 = "
                   f"{_g(design.gamma2, design.gamma2_decimal, random_digits)}")
    text = "; ".join(cut)
    return text if text.endswith("...") else text + "."


def _size_text(sizes) -> str:
    return "/".join(f"{s:.6f}" for s in sizes)


# -- shading and reference lines ------------------------------------------------------
def _shade_null(ax, design: Design, x0: float, x1: float, label=True):
    lab = "null region (H0)" if label else None
    pieces = design.problem.kind.null_pieces(design.low, design.high, design.value)
    for i, (a, b) in enumerate(pieces):
        if a == b:  # a point: a line, the null region has no width
            ax.axvline(a, color="0.6", linewidth=4, zorder=0, alpha=0.6,
                       label=("null value (H0)" if label else None))
            continue
        kw = {"label": lab} if i == 0 else {}
        ax.axvspan(x0 if a == -math.inf else a, x1 if b == math.inf else b, **kw, **NULL_SHADE)


def _alpha_line(ax, alpha, curve="power"):
    y = alpha if curve == "power" else 1.0 - alpha
    name = "alpha" if curve == "power" else "1 - alpha"
    ax.axhline(y, color="0.25", linewidth=0.9, linestyle=(0, (1, 2)), zorder=2,
               label=f"{name} = {number_text(y) if curve == 'power' else f'{y:g}'}")


def _curve_col(curve: str) -> str:
    if curve not in ("power", "oc"):
        raise invalid("curve", curve, "power or oc", PlanningError)
    return "power" if curve == "power" else "oc"


def _y_label(curve: str) -> str:
    return ("probability of rejecting H0 (power)" if curve == "power"
            else "probability of not rejecting H0 (OC)")


# -- one design: three rules ---------------------------------------------------------
def oc_figure(design: Design, frame=None, *, curve="power", random_digits=DEFAULT_RANDOM_DIGITS, size=(8.0, 7.2)):
    """Power (or OC) curves of the randomised, conservative and field rules of one design.

    ``frame`` is ``oc.operating_characteristics(design, ...)`` (computed here when
    omitted).  The null region is shaded, the alpha line drawn, the design named
    in the caption.  A lower panel shows each rule's curve minus the randomised
    rule's, of the same quantity as the top panel (power, or OC), so the signs
    agree (the curves nearly coincide in the main panel).  Returns a Figure.
    """
    col = _curve_col(curve)
    if frame is None:
        frame = operating_characteristics(design, random_digits=random_digits)
    d = frame.attrs.get("random_digits", random_digits)
    sizes = frame.attrs.get("sizes", {})
    fig = _new_figure(size)
    real = not design.problem.family.discrete  # real cutoffs: one rule, no difference panel
    if real:
        ax, foot = fig.subplots(2, 1, height_ratios=[3, 0.75])
        panels = dx = ax
    else:
        ax, dx, foot = fig.subplots(3, 1, height_ratios=[3, 1.1, 0.75])
        dx.sharex(ax)
        ax.tick_params(labelbottom=False)
        panels = (ax, dx)
    th = frame["theta"].to_numpy(float)
    x0, x1 = float(th.min()), float(th.max())
    for a in (panels if isinstance(panels, tuple) else (panels,)):
        _shade_null(a, design, x0, x1, label=a is ax)
        a.grid(True, color="0.8", linewidth=0.5)
    _alpha_line(ax, design.alpha, curve)
    base = frame[f"{col}_randomised"].to_numpy(float)  # lower panel: same quantity as the top
    for i, rule in enumerate(("randomised",) if real else ("randomised", "conservative",
                                                            "digits")):
        st = dict(STYLE[rule])
        label = "the rule (real cutoffs)" if real else rule_label(rule, d)
        if rule in sizes:
            label += f"; size {_size_text(sizes[rule])}"
        every = (0.02 + 0.03 * i, 0.09)
        ax.plot(th, frame[f"{col}_{rule}"].to_numpy(float), label=label, markevery=every, **st)
        if not real:
            dx.plot(th, frame[f"{col}_{rule}"].to_numpy(float) - base, markevery=every, **st)
    ax.set_xlim(x0, x1)
    ax.set_ylim(-0.02, 1.02)
    ax.set_ylabel(_y_label(curve))
    dx.set_xlabel(theta_axis_label(design))
    if not real:
        dx.set_ylabel("power minus\nrandomised power" if col == "power"
                      else "OC minus\nrandomised OC", fontsize=8.5)
    title = "Power function" if curve == "power" else "Operating characteristic (OC) curve"
    ax.set_title(f"{title}: {pretty(design.hypothesis())}", fontsize=11)
    caption = design_caption(design, d) + (
        " Sizes are the probabilities of rejecting H0 at "
        f"{', '.join(number_text(p) for p in design.points)} (6 decimals)" + (
            ". All values are exact probabilities." if real else "; the conservative and "
            "field rules never exceed alpha. All values are exact sums of probabilities."))
    add_footer(foot, ax, caption)
    return fig


# -- planning: power against n ---------------------------------------------------------
def plan_figure(result, frame, *, size=None):
    """Power against n at each alternative around a ``plan`` answer (one panel each).

    ``frame`` is ``planning.power_against_n(result)``.  The randomised rule is
    drawn solid; for the conservative and digit rules their saw-toothed power is
    drawn too.  The target line and the answers n (and n_from) are marked.
    """
    alts = list(result.alternatives)
    rows = len(alts)
    fig = _new_figure(size or (8.0, 1.8 + 2.6 * rows))
    axes = list(fig.subplots(rows + 1, 1, squeeze=False,
                             height_ratios=[2.6] * rows + [1.1])[:, 0])
    foot = axes.pop()
    for ax in axes[1:]:
        ax.sharex(axes[0])
    for ax in axes[:-1]:
        ax.tick_params(labelbottom=False)
    des = result.design
    fam = des.problem.family
    rules = ["randomised"] if result.rule == "randomised" else ["randomised", result.rule]
    d = result.random_digits or DEFAULT_RANDOM_DIGITS
    for ax, a in zip(axes, alts):
        sub = frame[frame["alternative"] == a]
        ns = sub["n"].to_numpy(float)
        for rule in rules:
            st = dict(STYLE[rule])
            if rule != "randomised":  # every grid point: the saw-tooth is the message
                st.update(linewidth=0.8, markersize=3.5 if len(ns) <= 200 else 0)
            ax.plot(ns, sub[f"power_{rule}"].to_numpy(float), label=rule_label(rule, d), **st)
        ax.axhline(result.target, color="0.25", linewidth=0.9, linestyle=(0, (1, 2)),
                   label=f"target power {result.target:g}")
        if result.rule != "randomised":
            ax.axvline(result.n_randomised, color="0.6", linewidth=1.0, linestyle=(0, (1, 1)),
                       label=f"n = {number_text(result.n_randomised)} (randomised rule)")
        ax.axvline(result.n, color="0.15", linewidth=1.2, linestyle=(0, (4, 1, 1, 1)),
                   label=f"n = {number_text(result.n)} (smallest n meeting the target)")
        if result.n_from != result.n:
            ax.axvline(result.n_from, color="0.4", linewidth=1.2, linestyle=(0, (2, 1)),
                       label=f"n_from = {number_text(result.n_from)} (every larger n meets it)")
        ax.set_ylabel(f"power at {fam.theta_word}\n= {number_text(a)}", fontsize=9)
        ax.grid(True, color="0.8", linewidth=0.5)
    axes[-1].set_xlabel(f"{fam.n_word} ({fam.n_unit}; grid step {number_text(result.step)})")
    rule_words = {"randomised": "randomised rule", "conservative": "conservative rule",
                  "digits": f"field rule with {d} random digits"}[result.rule]
    axes[0].set_title(f"Power against n, {rule_words}: {pretty(des.hypothesis())}", fontsize=10)
    rule_at = _cutoff_text(des, d if result.rule == "digits" else None)
    if result.rule == "conservative":
        rule_at = (rule_at if rule_at.endswith("...") else rule_at[:-1]) + (
            " (the randomised rule's gammas: never used, no rejection at a cutoff).")
    elif result.rule == "digits":
        rule_at += f" Thresholds t = floor(gamma x 10^{d}): " + ", ".join(
            f"t{i} = {t}" for i, t in enumerate(des.thresholds(d), start=1) if t is not None) + "."
    caption = (f"{des.problem.kind.optimality} {des.kind} test, {fam.name} family, "
               f"alpha = {number_text(result.alpha)}; "
               f"alternatives ({fam.theta_unit}) "
               f"{', '.join(number_text(x) for x in alts)}; target power {result.target:g}. "
               f"The {rule_words} at n = {number_text(result.n)}: {rule_at}")
    add_footer(foot, axes[0], caption)
    return fig


# -- a page of OC curves for one band (tables) ----------------------------------------------
def oc_pages(designs, *, rules=("randomised", "conservative"), curve="oc", random_digits=DEFAULT_RANDOM_DIGITS,
             n_per_chart=4, charts_per_page=4, paper="A4", title=None, points=161):
    """Page-sized figures of OC (or power) curves for the designs of one hypothesis.

    ``designs`` share family, kind and hypothesis values (e.g. one band of a
    table) and may differ in n and alpha.  Each row of charts holds one alpha and
    up to ``n_per_chart`` values of n; each column one rule of ``rules``.  Rows
    beyond ``charts_per_page`` go to further pages.  Returns a list of Figures
    (write them with ``figure_bytes``).
    """
    col = _curve_col(curve)
    designs = one_hypothesis(designs, "a page shows one hypothesis")
    rules = tuple({"randomized": "randomised"}.get(r, r) for r in rules)  # accepted spelling
    for r in rules:
        if r not in STYLE:
            raise invalid("rules", r, "randomised, conservative, digits", PlanningError)
    if paper not in PAGE_INCHES:
        raise invalid("paper", paper, "A4 or Letter", PlanningError)
    from .oc import shared_thetas

    theta = shared_thetas(designs, points)  # one x-range for every row of charts
    rows = []
    for alpha in sorted({x.alpha for x in designs}):
        group = sorted((x for x in designs if x.alpha == alpha), key=lambda x: x.n)
        for i in range(0, len(group), n_per_chart):
            rows.append(group[i:i + n_per_chart])
    pages = []
    for p in range(0, len(rows), charts_per_page):
        charts = [(group, [operating_characteristics(x, theta, random_digits=random_digits)
                           for x in group]) for group in rows[p:p + charts_per_page]]
        first = rows[p][0]
        fam = first.problem.family
        disp = (f", {fam.dispersion_word} = {number_text(first.dispersion)}"
                if first.dispersion is not None else "")
        head = title or (f"{'OC' if col == 'oc' else 'Power'} curves: "
                         f"{pretty(first.hypothesis())}, {fam.name} family{disp}")
        pages.append(draw_oc_page(charts, rules=rules, curve=col, random_digits=random_digits,
                                  size=PAGE_INCHES[paper],
                                  heading=f"{head} (page {len(pages) + 1})"))
    return pages


def draw_oc_page(charts, *, rules, curve="oc", random_digits=DEFAULT_RANDOM_DIGITS, size=PAGE_INCHES["A4"],
                 heading=None, note=True):
    """One figure of OC (or power) curves drawn from data computed elsewhere.

    ``charts`` is a list of (designs, frames): each one row of charts (one alpha,
    a few n), ``frames[i]`` being ``oc.operating_characteristics(designs[i], theta)``
    on one theta grid per row; one column of charts per rule of ``rules``.
    ``heading`` (if given) is the figure's title; ``note`` adds the line that
    explains the curves under the charts.  Draws only: computes nothing.
    """
    col = _curve_col(curve)
    fig = _new_figure(size)
    grid = fig.subplots(len(charts), len(rules), squeeze=False)
    first = charts[0][0][0]
    for r, (group, frames) in enumerate(charts):
        theta = frames[0]["theta"].to_numpy(float)
        x0, x1 = float(theta.min()), float(theta.max())
        for c, rule in enumerate(rules):
            ax = grid[r, c]
            _shade_null(ax, first, x0, x1, label=(c == 0))
            _alpha_line(ax, group[0].alpha, col)
            for i, (x, f) in enumerate(zip(group, frames)):
                st = dict(N_STYLES[i % len(N_STYLES)])
                ax.plot(f["theta"].to_numpy(float), f[f"{col}_{rule}"].to_numpy(float),
                        label=f"n = {number_text(x.n)}", markevery=(0.02 * i, 0.1),
                        markersize=4, **st)
            ax.set_xlim(x0, x1)
            ax.set_ylim(-0.02, 1.02)
            ax.grid(True, color="0.85", linewidth=0.5)
            sep = ", " if len(rules) < 3 else "\n"  # three columns: too narrow for one line
            name = (SHORT_RULE[rule].format(d=random_digits)
                    if group[0].problem.family.discrete else "the rule (real cutoffs)")
            ax.set_title(f"{name}{sep}alpha = {number_text(group[0].alpha)}", fontsize=8.5)
            ax.tick_params(labelsize=7.5)
            if c == 0:
                ax.set_ylabel(_y_label(col), fontsize=8)
            if r == len(charts) - 1 and (len(rules) < 3 or c == len(rules) // 2):
                ax.set_xlabel(theta_axis_label(first), fontsize=8)  # 3 columns: once, mid
        # one legend per row, right of its charts: it never hides a curve
        grid[r, -1].legend(*grid[r, 0].get_legend_handles_labels(), fontsize=7.5,
                           loc="upper left", bbox_to_anchor=(1.03, 1.0), frameon=False,
                           handlelength=3.2, borderaxespad=0.0)
    if heading:
        fig.suptitle(heading, fontsize=11)
    if note:
        fam = first.problem.family
        what = ("OC = probability of not rejecting H0" if col == "oc"
                else "power = probability of rejecting H0")
        fig.supxlabel(f"{what}, exact sums of probabilities for each {fam.n_word}; the shaded "
                      "region is H0.  The dotted line marks " + ("1 - alpha." if col == "oc"
                                                                 else "alpha."), fontsize=7.5)
    return fig


__all__ = ["check_plot_path", "design_caption", "draw_oc_page", "figure_bytes", "oc_figure",
           "oc_pages",
           "plan_figure", "save_figure", "theta_axis_label"]
