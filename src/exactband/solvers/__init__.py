"""The two independent solvers: ``fast`` (numpy/scipy) and ``precise`` (mpmath)."""
