"""The allocator settings of processes that run the model (the command line, the workers it starts): applied with glibc, never over the user's own."""
import platform

import pytest

from uq.sampling import allocator


def test_user_settings_in_the_environment_are_kept(monkeypatch):
    # glibc reads MALLOC_MMAP_THRESHOLD_ at start-up (mallopt(3), from memory): a value the
    # user exported must not be overridden by the command line
    monkeypatch.setenv("MALLOC_MMAP_THRESHOLD_", "65536")
    assert allocator.keep_blocks_in_heap() is False


@pytest.mark.skipif(platform.system() != "Linux" or platform.libc_ver()[0] != "glibc",
                    reason="mallopt thresholds are glibc's")
def test_thresholds_are_applied_with_glibc(monkeypatch):
    # mallopt returns 1 on success (mallopt(3)); both settings are accepted by glibc >= 2.0
    monkeypatch.delenv("MALLOC_MMAP_THRESHOLD_", raising=False)
    monkeypatch.delenv("MALLOC_TRIM_THRESHOLD_", raising=False)
    assert allocator.keep_blocks_in_heap() is True
    assert allocator.MMAP_THRESHOLD <= 32 * 2**20  # glibc caps the mmap threshold at 32 MiB


def test_worker_environment_keeps_the_users_values(monkeypatch):
    monkeypatch.setenv("MALLOC_TRIM_THRESHOLD_", "4096")
    monkeypatch.delenv("MALLOC_MMAP_THRESHOLD_", raising=False)
    env = allocator.worker_environment()
    assert env == {"MALLOC_TRIM_THRESHOLD_": "4096",
                   "MALLOC_MMAP_THRESHOLD_": str(allocator.MMAP_THRESHOLD)}


def _worker_thresholds():
    import os

    return os.environ.get("MALLOC_MMAP_THRESHOLD_"), os.environ.get("MALLOC_TRIM_THRESHOLD_")


@pytest.mark.slow
def test_a_local_dask_cluster_starts_its_workers_with_the_thresholds(monkeypatch):
    # Dask's nanny exports MALLOC_TRIM_THRESHOLD_=65536 to its workers by default (its
    # distributed.nanny.pre-spawn-environ setting); the cluster the tool starts overrides it
    pytest.importorskip("distributed", reason="the [dask] extra is not installed")
    from uq.sampling.backends import dask_executor

    monkeypatch.delenv("MALLOC_MMAP_THRESHOLD_", raising=False)
    monkeypatch.delenv("MALLOC_TRIM_THRESHOLD_", raising=False)
    with dask_executor(local_workers=1) as ex:
        seen = set(ex.client.run(_worker_thresholds).values())
    assert seen == {(str(allocator.MMAP_THRESHOLD), str(allocator.TRIM_THRESHOLD))}
