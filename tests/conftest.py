"""Test-session settings shared by every test module."""
import os

# One BLAS thread: on the 2-core CI machines more threads only thrash, and no result
# depends on the thread count. Must be set before numpy is first imported.
for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
