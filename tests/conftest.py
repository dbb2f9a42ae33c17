"""Test-session settings shared by every test module."""
import os

# One BLAS thread: on the 2-core CI machines more threads only thrash, and no result
# depends on the thread count. Must be set before numpy is first imported.
for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")


import importlib.util  # noqa: E402
from pathlib import Path  # noqa: E402

import pytest  # noqa: E402

_ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="session")
def project_script():
    """Load a tool of ``scripts/`` (not a package) by name, as a module."""
    def load(name: str):
        spec = importlib.util.spec_from_file_location(name, _ROOT / "scripts" / f"{name}.py")
        module = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(module)
        return module
    return load
