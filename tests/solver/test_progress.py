"""Progress while a solve runs, the iteration limit, and what an unconverged solve reports."""

from __future__ import annotations

import io
import itertools
import json

import numpy as np
import pytest
from click.testing import CliRunner
from locations import GOOD

from integrity.checks import check
from integrity.cli import main
from integrity.cli.progress import StatusLine
from integrity.solver import SolveProgress, solve_arrays
from integrity.solver.solve import residual_tolerance
from integrity.testing.arrays import random_restricted

HUBBARD = GOOD / "hubbard_ring6_u4.json"  # 400 determinants, no irreps: solved by Davidson, not exactly


def _hamiltonian():
    return random_restricted(6, np.random.default_rng(5), scale=0.5, spread=2.0)


def test_progress_reports_every_iteration_with_energies_residuals_and_time():
    h, eri = _hamiltonian()
    seen = []
    result = solve_arrays("restricted", h, eri, 2.5, n_alpha=3, n_beta=3, nroots=2, progress=seen.append)
    assert len(seen) == result.iterations
    assert [step.iteration for step in seen] == list(range(1, len(seen) + 1))
    assert all(isinstance(step, SolveProgress) and len(step.energies) == 2 for step in seen)
    last = seen[-1]
    assert np.allclose(last.energies, result.energies, atol=1e-8)  # ecore (2.5) included
    assert max(last.residual_norms) < last.residual_tolerance == residual_tolerance(1e-9)
    assert all(b.elapsed >= a.elapsed >= 0 for a, b in itertools.pairwise(seen))
    assert last.determinants == 400


def test_an_iteration_limit_leaves_the_roots_unconverged_and_says_so():
    h, eri = _hamiltonian()
    result = solve_arrays("restricted", h, eri, n_alpha=3, n_beta=3, max_iter=1)
    assert not result.roots[0].converged
    assert result.iterations == 1
    note = next(n for n in result.notes if n.startswith("not converged"))
    assert f"{result.roots[0].residual_norm:.2e}" in note and "after 1 iterations" in note


@pytest.mark.slow
def test_energy_fci_warns_with_the_figures_when_the_solve_does_not_converge():
    report = check(HUBBARD, only=("energy.fci",), max_iterations=1)
    (result,) = report.results
    assert result.status == "warn"
    assert "did not converge" in result.message and "after 1 iterations" in result.message
    assert "--max-iterations" in result.message
    assert check(HUBBARD, only=("energy.fci",)).results[0].status == "pass"


def test_check_progress_hook_names_the_file_and_the_check_and_sees_the_solve():
    events = []
    check(
        HUBBARD,
        only=("energy.hf", "energy.fci"),
        progress=lambda path, check_id, update: events.append((check_id, update)),
    )
    assert [c for c, u in events if u is None] == ["energy.hf", "energy.fci"]
    assert any(c == "energy.fci" and isinstance(u, SolveProgress) for c, u in events)


def test_the_solve_command_takes_the_solver_options_and_prints_no_progress_off_a_terminal():
    result = CliRunner().invoke(
        main, ["solve", str(HUBBARD), "--max-iterations", "1", "--convergence", "1e-8", "--format", "json"]
    )
    assert result.exit_code == 0, result.output
    (solved,) = json.loads(result.stdout)["results"]
    assert solved["roots"][0]["converged"] is False
    assert any(note.startswith("not converged") for note in solved["notes"])
    assert "iteration" not in result.stderr
    text = CliRunner().invoke(main, ["solve", str(HUBBARD), "--quiet", "--max-iterations", "1"])
    assert "(not converged)" in text.stdout


@pytest.mark.slow
def test_check_passes_the_solver_options_to_energy_fci():
    result = CliRunner().invoke(main, ["check", str(HUBBARD), "--only", "energy.fci", "--max-iterations", "1"])
    assert result.exit_code == 0
    assert "1 warning: energy.fci" in result.stdout


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_the_status_line_rewrites_one_line_and_clears_it():
    stream = _Terminal()
    line = StatusLine(stream, delay=0.0)
    line.solve(SolveProgress(3, (-1.5, -1.2), (1e-3, 2e-3), 1e-6, 12.0, 400))
    line.close()
    text = stream.getvalue()
    assert text.startswith("\rfull CI: iteration 3, E = -1.50000000 -1.20000000, residual 2.0e-03")
    assert text.endswith("\r")
    quiet = _Terminal()
    StatusLine(quiet, delay=3600.0).solve(SolveProgress(1, (0.0,), (1.0,), 1e-6, 0.0, 1))
    assert quiet.getvalue() == ""


def test_blas_runs_one_thread_during_a_native_solve_and_gets_its_setting_back():
    # the two sigma threads are the solve's parallelism; a threaded LAPACK on a loaded machine
    # made the P-space eigensolver 40 times slower (solver/parallel.py)
    from threadpoolctl import threadpool_info, threadpool_limits

    def blas_threads():
        return {entry["filepath"]: entry["num_threads"] for entry in threadpool_info() if entry["user_api"] == "blas"}

    h, eri = _hamiltonian()
    seen = []
    with threadpool_limits(limits=2, user_api="blas"):
        before = blas_threads()
        solve_arrays("restricted", h, eri, 0.0, n_alpha=3, n_beta=3, progress=lambda step: seen.append(blas_threads()))
        after = blas_threads()
    assert seen and all(set(threads.values()) == {1} for threads in seen)
    assert after == before
