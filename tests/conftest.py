"""Fixtures shared by every test: a CLI runner, an empty working folder, a seeded generator.

Support modules (``plain_format``, ``builders``) live in ``tests/support`` and are
found through ``pythonpath`` in the pytest configuration.
"""

from __future__ import annotations

import pytest


@pytest.fixture
def runner():
    """A click CliRunner (stdout and stderr are kept apart)."""
    from click.testing import CliRunner

    return CliRunner()


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    """Run inside an empty folder of its own (relative output names land there)."""
    monkeypatch.chdir(tmp_path)
    return tmp_path


@pytest.fixture
def rng(request):
    """A NumPy generator seeded from the test's name, so a failure can be replayed."""
    import zlib

    import numpy as np

    return np.random.default_rng(zlib.crc32(request.node.nodeid.encode()))


@pytest.fixture(scope="module")
def one_openmp_thread():
    """pyscf on tiny molecules runs fastest on one thread; two OpenMP threads on a busy
    two-core machine spin and run tens of times slower. Restored afterwards."""
    from pyscf import lib

    before = lib.num_threads()
    lib.num_threads(1)
    yield
    lib.num_threads(before)
