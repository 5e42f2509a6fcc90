"""exactband: exact optimal decision rules for count and proportion data.

>>> import exactband
>>> d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
>>> d.c1, round(d.gamma1, 6), d.c2, round(d.gamma2, 6)
(39, 0.133995, 76, 0.650555)
>>> print(d.describe())  # doctest: +ELLIPSIS
UMPU test, poisson family, exposure n = 25, size alpha = 0.05.
...
"""

from .api import design, designs
from .design import Design
from .errors import DesignError, ExactbandError, VerificationError
from .planning import plan

__version__ = "0.1.0"  # the one place the version is written (pyproject reads it)

__all__ = ["Design", "DesignError", "ExactbandError", "VerificationError", "design", "designs",
           "plan", "__version__"]
