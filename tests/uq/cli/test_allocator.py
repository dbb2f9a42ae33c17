"""The command line's allocator settings: applied with glibc, never over the user's own."""
import platform

import pytest

from uq.cli import allocator


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
