"""exactband: exact optimal decision rules for count and proportion data.

>>> import exactband
>>> d = exactband.design("poisson", "band", n=25, low=2, high=2.5, alpha=0.05)
>>> print(d.describe())  # doctest: +SKIP
"""

from .api import design, designs
from .design import Design
from .errors import DesignError, ExactbandError, VerificationError
from .planning import plan

__version__ = "0.1.0"

__all__ = ["Design", "DesignError", "ExactbandError", "VerificationError", "design", "designs",
           "plan", "__version__"]
