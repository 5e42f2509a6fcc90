"""Public entry points: ``design`` for one test, ``designs`` for a DataFrame of them.

Data flow: parameters -> params.make_problem (validation) -> solvers.fast ->
solvers.precise -> crosscheck -> Design.  Nothing here formats output.  The bulk
steps (``fast_solve``, ``verify_one``, ``verify_many``, ``check_precision``) live in
``solving`` and are re-exported here.
"""

from __future__ import annotations

import numpy as np

from .batch import COLUMNS, designs
from .design import Design
from .errors import DesignError
from .params import make_problem
from .solving import (
    DECIMALS,
    DEFAULT_PRECISION,
    MAX_PRECISION,
    MIN_PRECISION,
    check_precision,
    check_verifiable,
    fast_solve,
    from_fast,
    label,
    precision_alias,
    verify_many,
    verify_one,
)

__all__ = ["COLUMNS", "DECIMALS", "DEFAULT_PRECISION", "MAX_PRECISION", "MIN_PRECISION",
           "check_precision", "design", "designs", "fast_solve", "from_fast", "label",
           "precision_alias", "verify_many", "verify_one"]


def design(family, kind, *, n, alpha, low=None, high=None, value=None, dispersion=None,
           precision=None, verify=True, digits=None) -> Design:
    """Exact optimal test for one problem.

    Parameters
    ----------
    family : {"poisson", "binomial", "negative-binomial"}
    kind : {"upper", "lower", "point", "band", "equivalence"}
    n : exposure (poisson, real > 0) or number of trials/units (integer >= 1)
    alpha : size, 0 < alpha < 1
    low, high : band ends (band, equivalence); value : (upper, lower, point)
    dispersion : known k > 0 (negative-binomial only)
    precision : significant digits of the verifying mpmath solver (default 50)
    verify : compute with both solvers and require agreement (default True)
    digits : deprecated alias of ``precision``

    Returns
    -------
    Design with c1, gamma1, c2, gamma2, phi(y), power(theta), sizes, describe().

    Raises
    ------
    DesignError for unusable input (one line naming the parameter);
    VerificationError if the two solvers disagree.

    Examples
    --------
    >>> d = design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
    >>> (d.c1, d.c2)
    (39, 76)
    """
    if not isinstance(verify, (bool, np.bool_)):
        raise DesignError(f"invalid verify = {verify!r}: True or False", field="verify",
                          value=verify, allowed="True or False")
    p = make_problem(family, kind, n=n, alpha=alpha, low=low, high=high, value=value,
                     dispersion=dispersion)
    precision = precision_alias(precision, digits)
    d = check_precision(DEFAULT_PRECISION if precision is None else precision)
    if verify:
        check_verifiable(p, d)
    sol = fast_solve([p])[0]
    if not verify:
        return from_fast(p, sol)
    return verify_one(p, sol, d)
