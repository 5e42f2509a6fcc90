"""What a continuous family adds to ``Family``: real cutoffs, no randomisation.

A continuous family (``discrete = False``) describes a Y with a density and a
monotone likelihood ratio in Y.  Its optimal rules have real cutoffs and no
gammas (Lehmann & Romano, 3rd ed., 3.4, 3.7, 4.2).  Instead of the discrete
``float_law`` / ``mp_law`` it gives

* ``continuous_float(n, k)``: the float law (numpy/scipy) of Y as a function of
  (c, theta): cdf, sf, logcdf, logsf, logpdf, ppf, isf, dcdf (d/dtheta of the
  cdf), score (d/dtheta log f), mean, sd, theta_sd (the change of theta worth one
  sd of Y), ``lower`` (the support's lower end) and ``floor_scale`` (cutoffs are
  compared relative to |c| + sd when True, |c| when False): see
  ``solvers.cfast``;
* ``continuous_mp(n, k)``: the mpmath law (cdf, sf, pdf, mean_below, mean_above,
  mean, sd, lower) for ``solvers.cprecise``, built at the caller's precision;
* ``scipy_law(theta, n, k)``: the frozen scipy.stats law (audit, plots).

The power of a rule is the kind's tails or middle under the float law
(``power``); ``y_decimals`` is how many decimals a cutoff or an observed Y is
read to by default.
"""

from __future__ import annotations

import numpy as np

from .base import Family


class ContinuousFamily(Family):
    """Base of the continuous families (normal, gamma)."""

    discrete = False
    float_law = None  # the discrete float-law interface does not apply

    def continuous_float(self, n, k):  # pragma: no cover - overridden
        raise NotImplementedError

    def continuous_mp(self, n, k):  # pragma: no cover - overridden
        raise NotImplementedError

    def mp_law(self, theta, n, k):
        raise TypeError(f"the {self.name} family is continuous: use continuous_mp(n, k)")

    def power(self, kind, c1, c2, thetas, n, k) -> np.ndarray:
        """E_theta phi(Y) of the rule with real cutoffs (c1, c2) at an array of thetas."""
        from ..solvers.cfast import expectation

        t = np.asarray(thetas, dtype=float)
        law = self.continuous_float(n, k)
        out = expectation(law, kind, c1, c2, t)
        return np.clip(np.broadcast_to(out, t.shape).astype(float), 0.0, 1.0)

    def natural_delta(self, lo, hi, n, k):
        law = self.continuous_float(n, k)
        return (hi - lo) / float(law.theta_sd(lo))
