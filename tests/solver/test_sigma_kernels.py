"""The compiled alpha-beta path of blocked sigma against the numpy path it replaces.

Both paths sum the same terms over the same intermediate ``G`` in another
order, so they agree to rounding: 1e-12 relative to the largest element of
sigma (a few ulps of sums of at most a few hundred terms).

The loops of :mod:`integrity.solver.sigma_kernels` are checked twice: as
plain Python (no numba needed, so this runs everywhere) and compiled by
numba (skipped where numba is not installed).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from integrity.solver import sigma_blocked as sigma_blocked_module
from integrity.solver import sigma_kernels, solve_arrays
from integrity.solver.irrep_blocks import block_layout
from integrity.solver.memory import two_string_memory
from integrity.solver.point_group import string_irreps
from integrity.solver.sigma_blocked import build_blocked, sigma_blocked
from integrity.solver.strings import strings
from integrity.testing.arrays import random_restricted, random_unitary, random_unrestricted, rotate_orbitals

RELATIVE = 1e-12
N2_IRREPS = [0, 5, 0, 5, 0, 6, 7, 2, 3, 5, 0, 6, 7, 0]  # orbital irreps of a D2h CAS(14,14), for the estimate
INTERPRETED = sigma_kernels.SimpleNamespace(
    gather_rows=sigma_kernels.gather_rows, scatter_alpha=sigma_kernels.scatter_alpha
)


def _arrays(kind, n, rng):
    if kind == "restricted":
        h, g = random_restricted(n, rng)
        return (h, h, g, g, g)
    if kind == "complex":
        h, g = rotate_orbitals(*random_restricted(n, rng), random_unitary(n, rng))
        return (h, h, g, g, g)
    h, g = random_unrestricted(n, rng)
    return (h[0], h[1], g[0], g[1], g[2])


def _both_paths(arrays, layout, c, compress_all):
    """Sigma by the numpy path and by the loop path (the kernels as :func:`compiled_kernels` returns them)."""
    with pytest.MonkeyPatch.context() as patch:
        if compress_all:  # the per-string (compressed) beta gather even where it does not pay
            patch.setattr(sigma_blocked_module, "COMPRESS_ROWS", 0)
            patch.setattr(sigma_blocked_module, "COMPRESS_FRACTION", 1.0)
        want = sigma_blocked(build_blocked(*arrays, layout, compiled=False), c)
        got = sigma_blocked(build_blocked(*arrays, layout, compiled=True), c)
    return got, want


def _random_case(data, n, kind, seed):
    n_alpha = data.draw(st.integers(0, n), label="n_alpha")
    n_beta = n_alpha if kind == "complex" else data.draw(st.integers(0, n), label="n_beta")
    rng = np.random.default_rng(seed)
    arrays = _arrays(kind, n, rng)
    irreps = rng.integers(0, 8, n)
    target = data.draw(st.integers(0, 7), label="irrep")
    labels = string_irreps(strings(n, n_alpha), irreps)[:, None] ^ string_irreps(strings(n, n_beta), irreps)[None, :]
    if not np.any(labels == target):
        return None
    layout = block_layout(n, n_alpha, n_beta, irreps, target)
    c = rng.standard_normal(layout.size)
    if kind == "complex":
        c = c + 1j * rng.standard_normal(layout.size)
    return arrays, layout, c


def _assert_close(got, want):
    scale = max(1.0, float(np.abs(want).max(initial=0.0)))
    assert np.abs(got - want).max(initial=0.0) <= RELATIVE * scale


@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(2, 7),
    data=st.data(),
    kind=st.sampled_from(["restricted", "unrestricted", "complex"]),
    compress_all=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_the_loops_as_python_give_the_numpy_sigma(n, data, kind, compress_all, seed):
    case = _random_case(data, n, kind, seed)
    if case is None:
        return
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(sigma_blocked_module, "compiled_kernels", lambda: INTERPRETED)
        got, want = _both_paths(*case, compress_all)
    _assert_close(got, want)


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(2, 7),
    data=st.data(),
    kind=st.sampled_from(["restricted", "unrestricted", "complex"]),
    compress_all=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_the_compiled_loops_give_the_numpy_sigma(n, data, kind, compress_all, seed):
    pytest.importorskip("numba")
    case = _random_case(data, n, kind, seed)
    if case is None:
        return
    got, want = _both_paths(*case, compress_all)
    _assert_close(got, want)


@pytest.mark.parametrize("scratch", [1, 100_000])
def test_the_compiled_loops_give_the_numpy_sigma_in_narrow_units(scratch, monkeypatch):
    # One beta string per unit, or units of 6 and 8 of 14 with a remainder: offsets depend on the width.
    pytest.importorskip("numba")
    rng = np.random.default_rng(scratch)
    arrays = _arrays("unrestricted", 8, rng)
    layout = block_layout(8, 4, 3, [0, 1, 2, 3, 0, 1, 2, 3], 2)
    monkeypatch.setattr(sigma_blocked_module, "SCRATCH_BYTES", scratch)
    widths = {target.width for target in build_blocked(*arrays, layout, compiled=True).targets}
    assert widths == ({1} if scratch == 1 else {6, 8})
    c = rng.standard_normal(layout.size)
    got, want = _both_paths(arrays, layout, c, compress_all=False)
    _assert_close(got, want)


def test_the_numpy_path_can_be_forced(monkeypatch):
    monkeypatch.setenv(sigma_kernels.ENVIRONMENT, "numpy")
    assert not sigma_kernels.use_compiled(10**9)
    h, g = random_restricted(4, np.random.default_rng(0))
    op = build_blocked(h, h, g, g, g, block_layout(4, 2, 2, [0, 1, 0, 1], 0))
    assert not op.compiled
    assert all(target.terms is None and target.offsets for target in op.targets)


def test_an_unknown_kernel_setting_is_refused(monkeypatch):
    monkeypatch.setenv(sigma_kernels.ENVIRONMENT, "fortran")
    with pytest.raises(ValueError, match=sigma_kernels.ENVIRONMENT):
        sigma_kernels.use_compiled(10)


def test_without_numba_the_numpy_path_is_taken_and_numba_cannot_be_required(monkeypatch):
    real = sigma_kernels.importlib.util.find_spec
    monkeypatch.setattr(
        sigma_kernels.importlib.util, "find_spec", lambda name, *rest: None if name == "numba" else real(name, *rest)
    )
    monkeypatch.delenv(sigma_kernels.ENVIRONMENT, raising=False)
    assert not sigma_kernels.use_compiled(10**9)
    monkeypatch.setenv(sigma_kernels.ENVIRONMENT, "numba")
    with pytest.raises(ValueError, match="not installed"):
        sigma_kernels.use_compiled(10)


def test_with_numba_large_vectors_take_the_compiled_path(monkeypatch):
    pytest.importorskip("numba")
    monkeypatch.delenv(sigma_kernels.ENVIRONMENT, raising=False)
    assert sigma_kernels.use_compiled(sigma_kernels.COMPILED_FROM)
    assert not sigma_kernels.use_compiled(sigma_kernels.COMPILED_FROM - 1)
    assert two_string_memory(14, 7, 7, layout=block_layout(14, 7, 7, N2_IRREPS, 0)).parts["compiled loops"] > 0
    monkeypatch.setenv(sigma_kernels.ENVIRONMENT, "numba")  # small ones when asked
    h, g = random_restricted(4, np.random.default_rng(1))
    op = build_blocked(h, h, g, g, g, block_layout(4, 2, 2, [0, 1, 0, 1], 0))
    assert op.compiled
    assert all(target.terms is not None and not target.offsets for target in op.targets)


@pytest.mark.parametrize("kind", ["restricted", "unrestricted"])
def test_a_solve_on_the_compiled_path_gives_the_numpy_energies(kind, monkeypatch):
    pytest.importorskip("numba")
    rng = np.random.default_rng(7)
    h, g = (random_restricted if kind == "restricted" else random_unrestricted)(7, rng, spread=2.0)
    irreps = [0, 1, 2, 3, 0, 1, 3]
    energies = {}
    for kernel in ("numpy", "numba"):
        monkeypatch.setenv(sigma_kernels.ENVIRONMENT, kernel)
        result = solve_arrays(kind, h, g, n_alpha=3, n_beta=3, irreps=irreps, irrep=1, nroots=2, tol=1e-10)
        energies[kernel] = result.energies
    assert np.allclose(energies["numba"], energies["numpy"], atol=1e-9, rtol=0)


@pytest.mark.parametrize("kind", ["restricted", "complex"])
def test_the_warm_up_compiles_the_signatures_sigma_uses(kind):
    # Otherwise the first sigma would compile again and the warm-up would hide nothing.
    pytest.importorskip("numba")
    rng = np.random.default_rng(3)
    arrays = _arrays(kind, 6, rng)
    layout = block_layout(6, 3, 3, [0, 1, 2, 3, 0, 1], 0)
    dtype = np.result_type(*arrays, np.float64)
    sigma_kernels.warm_up(dtype).join()
    kernels = sigma_kernels.compiled_kernels()
    before = {name: set(getattr(kernels, name).signatures) for name in ("gather_rows", "scatter_alpha")}
    c = rng.standard_normal(layout.size).astype(dtype)
    for compress_all in (False, True):
        _both_paths(arrays, layout, c, compress_all)
    after = {name: set(getattr(kernels, name).signatures) for name in ("gather_rows", "scatter_alpha")}
    assert after == before
