"""Number text for messages, descriptions and captions (one rule everywhere).

>>> number_text(25.0), number_text(0.05), number_text(7), number_text(None)
('25', '0.05', '7', '-')
"""

from __future__ import annotations

import numpy as np


def number_text(x) -> str:
    """Short, exact-looking text for a user number (25.0 -> '25'; None -> '-')."""
    if x is None:
        return "-"
    if isinstance(x, (int, np.integer)):
        return str(int(x))
    x = float(x)
    if x.is_integer() and abs(x) < 1e15:
        return str(int(x))
    return repr(x)
