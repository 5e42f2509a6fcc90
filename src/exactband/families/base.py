"""What every family provides, and the parameter checks they share.

A family describes the law of the sufficient statistic Y (the total over n units)
as a function of the per-unit parameter theta.  It carries two independent
implementations of that law:

* a float law (``FloatLaw``): vectorised numpy/scipy code used by the fast solver;
* a precise law (``MpLaw``): mpmath tables of the probability mass function used
  by the high-precision solver.

The two never share distribution code, so agreement between the solvers checks
the probabilities as well as the search.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import invalid


def as_real(field: str, value) -> float:
    """Return ``value`` as a finite float or raise a one-line DesignError."""
    from ..strict import real

    return real(field, value, "a finite number is required")


@dataclass(frozen=True)
class Family:
    """Static description of a family: names, parameter space, the two laws."""

    name: str
    theta_word: str  # what theta is called in plain words
    theta_unit: str  # "per unit", "per trial" ...
    n_word: str  # what n counts
    integer_n: bool
    uses_dispersion: bool

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

    def theta_allowed(self) -> str:  # pragma: no cover - overridden
        raise NotImplementedError

    def theta_ok(self, theta: float) -> bool:  # pragma: no cover - overridden
        raise NotImplementedError

    def theta_ok_array(self, theta):
        """Vectorised theta_ok."""
        import numpy as np

        t = np.asarray(theta, dtype=float)
        return np.array([self.theta_ok(float(x)) for x in t.ravel()], dtype=bool).reshape(t.shape)

    def check_theta(self, field: str, theta) -> float:
        x = as_real(field, theta)
        if not self.theta_ok(x):
            raise invalid(field, theta, self.theta_allowed())
        return x

    def check_dispersion(self, k):
        if not self.uses_dispersion:
            if k is None:
                return None
            raise invalid(
                "dispersion", k,
                f"the {self.name} family takes no dispersion; it is used only by negative-binomial",
            )
        allowed = "the negative-binomial family needs a known dispersion k, a finite number > 0"
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
    def float_params(self, theta, n, k):  # pragma: no cover - overridden
        """Parameters of the float law as a tuple of numpy arrays."""
        raise NotImplementedError

    def mp_law(self, theta, n, k, target_digits: int):  # pragma: no cover
        """A precise law for one parameter value (see families.mptable)."""
        raise NotImplementedError

    float_law = None  # set by subclasses
