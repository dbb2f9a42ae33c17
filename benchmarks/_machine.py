"""Shared set-up of the issue-7 benchmarks: one BLAS thread, repository on the path, machine line.

Import this module before numpy. BLAS/OpenMP thread pools oversubscribe the shared 2-core
machine and have been measured to distort timings by up to 20x, so every benchmark pins them
to one thread (an explicit value already in the environment is kept).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

CONFIGS = ROOT / "configs"
PROPELLER_DEMO = CONFIGS / "under_ice_section.toml"
GLIDER_DEMO = CONFIGS / "glider_transit.toml"


def load_average() -> str:
    """1-, 5- and 15-minute load averages, formatted."""
    one, five, fifteen = os.getloadavg()
    return f"{one:.2f} / {five:.2f} / {fifteen:.2f}"


def machine_report() -> str:
    """Platform, CPU count, Python, numpy/scipy versions, thread pinning and load average."""
    import platform

    import numpy as np
    import scipy

    return (
        f"machine: {platform.platform()} | {platform.machine()} | cpus {os.cpu_count()} | "
        f"python {platform.python_version()} | numpy {np.__version__} | scipy {scipy.__version__}\n"
        f"threads: OMP_NUM_THREADS={os.environ.get('OMP_NUM_THREADS')} "
        f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS')} | "
        f"load average (1/5/15 min): {load_average()}"
    )
