"""What every family provides, and the parameter checks they share.

A family describes the law of the statistic Y (the total, or the mean, over n
units) as a function of the per-unit parameter theta.  Everything the rest of
the package knows about a family it asks the ``Family`` object: writers,
audit, decide, oc, plots and the solvers never branch on a family's name.

A new family is one module in ``families/`` (its ``Family`` subclass and
instance, its float law, its precise law, its scipy law) plus one line in
``families/__init__.py`` registering it (see DEVELOPERS.md, "Adding a family").

What a Family carries
---------------------
Words (dataclass fields, given when the instance is made; each is printed somewhere,
so choose them as they should read):

* ``name``: the family's name as typed (``design("poisson", ...)``, specs, CSV columns).
* ``theta_word``: theta in plain words in sentences ("rate per unit"): describe(),
  decide, plan.
* ``theta_unit``: theta's unit in words, for axis labels and captions
  ("counts per unit of exposure").
* ``axis_word``: theta's name on a chart axis ("rate \u03b8").
* ``symbol``: theta's name in the printed tables' formulas ("rate" in
  "H0: 2 <= rate <= 2.5").
* ``theta_what``: what theta is, for the tables ("the expected count per unit of exposure").
* ``n_word``: what n is called ("exposure n"); ``n_what``: what n is, for the tables
  ("the exposure (units inspected)"); ``n_unit``: n's unit on a chart axis ("exposure units").
* ``y_word``: what Y is in describe() ("the total count over the sample");
  ``y_inspected``: what Y is on a table's cover, in the words of an inspection
  ("the total count over the inspected exposure n").
* ``dispersion_word``: the known nuisance parameter's name when ``uses_dispersion``.

Kind of statistic and parameter space (``discrete``, ``reflects`` and ``float_law`` are
class attributes of the subclass; the rest are fields or methods):

* ``discrete``: True when Y takes whole values (counts): cutoffs are integers,
  the rule randomises at a cutoff, the laws have a probability mass function.
  False for a continuous Y: real cutoffs, no randomisation (gammas absent), no
  pmf; the members marked *discrete only* below do not apply.
* ``integer_n``: n is a whole number (trials, units) rather than a real exposure.
* ``uses_dispersion``: the law needs a known second parameter (``dispersion``).
* ``theta_min``, ``theta_max``: the ends of the (open) parameter space, -inf/inf when
  unbounded; ``theta_ok``, ``theta_ok_array`` and ``theta_allowed`` (the words of
  the check) must agree with them. ``bounded``: both ends finite (a proportion).
* ``theta_scale()``: maps theta to an unbounded scale and back (log for a
  positive parameter, logit for a proportion, identity for a real one); the
  default theta range of power and OC curves is searched on that scale.
* ``theta_spread(theta, n, k)``: the standard error of the per-unit estimate of
  theta at theta (how far the audit looks for a dip in the power).
* ``support_max(n)``: the largest value Y can take, None when unbounded
  (binomial: n). *Discrete only* in its use: decide accepts counts 0..support_max.

Laws (independent implementations: they never share probability code):

* ``float_law``: a ``floatlaw.FloatLaw`` subclass (numpy/scipy) for the fast
  solver, the power and OC curves, the sizes of derived rules and planning.
  Its interface as documented in ``floatlaw`` (pmf, cdf/sf at integer cutoffs,
  ``mode``, ``supmax``, derivatives in t) is *discrete only*.
* ``mp_law(theta, n, k)``: the high-precision law (mpmath) for the precise solver;
  for a discrete family an object ``families.mptable.MpTable`` tabulates
  (``mode``, ``mean``, ``variance``, ``supmax``, exact ratios of masses ...).
* ``scipy_law(theta, n, k)``: the frozen ``scipy.stats`` distribution of Y, the
  independent reference the audit's other constructions (one-sided tails) use.
* ``natural_delta(lo, hi, n, k)``: the difference of the fast law's working
  parameter t between two thetas (the width of a band on t's scale).
* ``log_ratio_line(lo, hi, n, k)``: the log ratio of the two laws,
  log f_hi(y) - log f_lo(y) = s (y - y*), as (s, y0, d) with y* = y0 + d, y0 a
  whole number: s = eta(hi) - eta(lo) and y* = (A(hi) - A(lo)) / s (natural
  parameter eta, log-partition A) from the exact decimals, so that y* - c is
  right to a few units of roundoff of (y* - mean) for an integer c near y*
  however large the mean. Used by the fast solver only (None: not provided).
  *Discrete only.*
* ``reflects``: True when Y -> support_max - Y with theta -> 1 - theta maps the
  family onto itself (the binomial); the fast solver then solves theta > 1/2 in
  the mirror image. *Discrete only.*
* ``law_note(problem)``: a sentence for describe() when the law is computed in a
  limiting form (None otherwise).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import invalid


def as_real(field: str, value) -> float:
    """Return ``value`` as a finite float or raise a one-line DesignError."""
    from ..strict import real

    return real(field, value, "a finite number is required")


@dataclass(frozen=True)
class Family:
    """Static description of a family: words, parameter space, the laws (see the module doc)."""

    name: str
    theta_word: str  # theta in sentences: "rate per unit"
    theta_unit: str  # theta's unit on axes and in captions: "counts per unit of exposure"
    axis_word: str  # theta on a chart axis: "rate \u03b8"
    symbol: str  # theta in the printed tables' formulas: "rate"
    theta_what: str  # what theta is (tables): "the expected count per unit of exposure"
    n_word: str  # what n is called: "exposure n"
    n_what: str  # what n is (tables): "the exposure (units inspected)"
    n_unit: str  # n's unit on a chart axis: "exposure units"
    y_word: str  # what Y is (describe): "the total count over the sample"
    y_inspected: str  # what Y is (a table's cover): "the total count over the inspected exposure n"
    integer_n: bool
    uses_dispersion: bool
    dispersion_word: str = "dispersion k"  # the known second parameter, when uses_dispersion
    theta_min: float = 0.0  # the open parameter space (theta_min, theta_max)
    theta_max: float = math.inf

    # class attributes, set by a subclass where they differ
    discrete = True  # whole-valued Y (integer cutoffs, randomised); False: continuous Y
    reflects = False  # Y -> n - Y, theta -> 1 - theta maps the family onto itself
    float_law = None  # a floatlaw.FloatLaw subclass, set by subclasses

    # -- parameter space ------------------------------------------------------
    @property
    def bounded(self) -> bool:
        """Both ends of the parameter space are finite (a proportion)."""
        return math.isfinite(self.theta_min) and math.isfinite(self.theta_max)

    def theta_allowed(self) -> str:  # pragma: no cover - overridden
        raise NotImplementedError

    def theta_ok(self, theta: float) -> bool:  # pragma: no cover - overridden
        raise NotImplementedError

    def theta_ok_array(self, theta):
        """Vectorised theta_ok."""
        import numpy as np

        t = np.asarray(theta, dtype=float)
        return np.array([self.theta_ok(float(x)) for x in t.ravel()], dtype=bool).reshape(t.shape)

    def theta_scale(self):
        """(to_u, from_u): theta to an unbounded scale and back; here log (theta > 0)."""
        return math.log, lambda u: math.exp(u) if u < 700 else math.inf

    def theta_spread(self, theta: float, n: float, k) -> float:  # pragma: no cover
        """Standard error of the per-unit estimate of theta at theta (n units)."""
        raise NotImplementedError

    def support_max(self, n):
        """The largest value Y can take with n units, None when unbounded."""
        return None

    # -- parameter checks -------------------------------------------------
    def check_n(self, n):
        """Validate n: a positive real (exposure) or a positive integer count."""
        if self.integer_n:
            allowed = f"{self.n_word} must be a whole number >= 1 for the {self.name} family"
            from ..strict import whole

            x = whole("n", n, allowed)
            if x < 1:
                raise invalid("n", n, allowed)
            if x > 1e12:
                raise invalid("n", n, "n must not exceed 1e12")
            return int(x)
        allowed = f"{self.n_word} must be a finite number > 0 for the {self.name} family"
        from ..strict import real

        x = real("n", n, allowed)
        if x <= 0:
            raise invalid("n", n, allowed)
        if x > 1e12:
            raise invalid("n", n, "n must not exceed 1e12")
        return x

    def check_theta(self, field: str, theta) -> float:
        x = as_real(field, theta)
        if not self.theta_ok(x):
            raise invalid(field, theta, self.theta_allowed())
        return x

    def check_dispersion(self, k):
        if not self.uses_dispersion:
            if k is None:
                return None
            from .registry import dispersion_users

            raise invalid(
                "dispersion", k,
                f"the {self.name} family takes no dispersion; it is used only by "
                f"{dispersion_users()}",
            )
        allowed = (f"the {self.name} family needs a known {self.dispersion_word}, "
                   "a finite number > 0")
        if k is None:
            raise invalid("dispersion", k, allowed)
        x = as_real("dispersion", k)
        if x <= 0:
            raise invalid("dispersion", k, allowed)
        return x

    def law_note(self, problem) -> str | None:
        """A sentence for describe() when the law is computed in a limiting form."""
        return None

    # -- laws --------------------------------------------------------------
    def mp_law(self, theta, n, k):  # pragma: no cover
        """A precise law for one parameter value (see families.mptable)."""
        raise NotImplementedError

    def scipy_law(self, theta, n, k):  # pragma: no cover
        """The frozen scipy.stats distribution of Y at theta (n units, dispersion k)."""
        raise NotImplementedError

    def natural_delta(self, lo, hi, n, k):  # pragma: no cover
        """The difference of the float law's working parameter t between theta lo and hi."""
        raise NotImplementedError

    def log_ratio_line(self, lo, hi, n, k):
        """(s, y0, d): log f_hi(y) - log f_lo(y) = s (y - y0 - d) (module doc); None here."""
        return None
