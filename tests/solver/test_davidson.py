"""Davidson–Liu against numpy's dense eigh on explicit Hermitian matrices."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from integrity.errors import FieldError
from integrity.solver.davidson import davidson


def _hermitian(n: int, seed: int, complex_values: bool) -> np.ndarray:
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((n, n))
    if complex_values:
        a = a + 1j * rng.standard_normal((n, n))
    # A dominant, spread diagonal as in CI matrices makes the preconditioner meaningful.
    return 0.02 * (a + a.conj().T) + np.diag(np.linspace(-2.0, 5.0, n))


@pytest.mark.slow
@settings(max_examples=20, deadline=None)
@given(st.integers(0, 10**6), st.booleans(), st.integers(1, 4))
def test_lowest_roots_match_dense_diagonalisation(seed, complex_values, nroots):
    a = _hermitian(300, seed, complex_values)
    dtype = np.complex128 if complex_values else np.float64
    result = davidson(lambda v: a @ v, np.real(np.diag(a)), nroots, tol=1e-9, dtype=dtype)
    exact, vectors = np.linalg.eigh(a)
    assert result.converged.all()
    assert np.allclose(result.energies, exact[:nroots], atol=1e-12, rtol=0)
    assert (result.residual_norms < 1e-9).all()
    overlaps = np.abs(vectors[:, :nroots].conj().T @ result.vectors)
    assert np.allclose(np.diag(overlaps), 1.0, atol=1e-8)


def test_small_spaces_are_diagonalised_explicitly_with_every_root():
    a = _hermitian(7, 3, False)
    result = davidson(lambda v: a @ v, np.diag(a).copy(), 10)
    assert len(result.energies) == 7
    assert np.allclose(result.energies, np.linalg.eigvalsh(a), atol=1e-12)


def test_the_start_is_deterministic_and_picks_lowest_diagonal_first():
    a = _hermitian(400, 11, False)
    first = davidson(lambda v: a @ v, np.diag(a).copy(), 2, tol=1e-9)
    second = davidson(lambda v: a @ v, np.diag(a).copy(), 2, tol=1e-9)
    assert first.iterations == second.iterations
    assert np.array_equal(first.vectors, second.vectors)


def test_a_projector_confines_the_search_to_its_range():
    n = 300
    a = _hermitian(n, 5, False)
    # Symmetrise under the reflection i -> n - 1 - i; keep only the odd vectors.
    reflection = np.eye(n)[::-1]
    a = 0.5 * (a + reflection @ a @ reflection)

    def odd(v):
        return 0.5 * (v - v[::-1])

    result = davidson(lambda v: a @ v, np.diag(a).copy(), 3, tol=1e-9, project=odd, explicit_limit=0)
    basis = np.linalg.qr(np.eye(n) - reflection)[0][:, : n // 2]
    exact = np.linalg.eigvalsh(basis.T @ a @ basis)
    assert np.allclose(result.energies, exact[:3], atol=1e-11)
    assert np.allclose(result.vectors, -result.vectors[::-1])


def test_max_iterations_stop_the_search_and_flag_unconverged_roots():
    a = _hermitian(500, 2, False)
    result = davidson(lambda v: a @ v, np.diag(a).copy(), 2, tol=1e-14, max_iter=2)
    assert result.iterations == 2
    assert not result.converged.all()


def test_zero_roots_are_refused():
    with pytest.raises(FieldError, match="nroots"):
        davidson(lambda v: v, np.zeros(3), 0)
