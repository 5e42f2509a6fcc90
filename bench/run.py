"""Run every benchmark script in bench/ (bench_*.py) in turn, in one process tree."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path


def main() -> int:
    here = Path(__file__).resolve().parent
    status = 0
    for script in sorted(here.glob("bench_*.py")):
        print(f"== {script.name}", flush=True)
        status |= subprocess.call([sys.executable, str(script)])
        print(flush=True)
    return status


if __name__ == "__main__":
    raise SystemExit(main())
