"""``integrity solve FILE``: full-CI energies of the lowest states."""

from __future__ import annotations

import click

from integrity.cli.options import engine_option, format_option, guarded, memory_option, options_named, solver_options
from integrity.cli.progress import solve_status
from integrity.cli.render import as_json, solve_text

#: the solver's argument names, as the options that set them
SOLVE_OPTIONS = {
    "n_alpha": "--alpha",
    "n_beta": "--beta",
    "n_electrons": "--electrons",
    "two_s": "--two-s",
    "irrep": "--irrep",
    "nroots": "--roots",
    "tol": "--convergence",
    "max_iter": "--max-iterations",
}


@click.command(short_help="Full-CI energies of the lowest states.")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--roots", type=click.IntRange(min=1), default=1, show_default=True, help="How many states.")
@click.option("--alpha", type=click.IntRange(min=0), help="Alpha electrons (default: the file's).")
@click.option("--beta", type=click.IntRange(min=0), help="Beta electrons (default: the file's).")
@click.option(
    "--electrons", type=click.IntRange(min=0), help="Total electrons only (spin-orbital files that couple the spins)."
)
@click.option("--two-s", type=click.IntRange(min=0), help="Keep only states with this 2S.")
@click.option("--irrep", type=click.IntRange(0, 7), help="Keep only states of this irrep (needs irreps).")
@engine_option("Our solver, pyscf's, or both side by side.")
@memory_option("Refuse a solve whose estimate exceeds this.")
@solver_options
@click.option("--quiet", is_flag=True, help="No progress line on the terminal while a long solve runs.")
@format_option()
@guarded
def solve(
    file, roots, alpha, beta, electrons, two_s, irrep, engine, memory, max_iterations, convergence, quiet, output_format
):
    """Full-CI energies of the lowest states of FILE, with their 2S and, when the file has irreps, their irrep
    (by name when its provenance names them). A 2S that no state of the electron counts can have is refused
    at once.

    \b
    A solve that runs for more than a few seconds shows its Davidson
    iteration, energies, residual norms and elapsed time on stderr when that
    is a terminal (not with --quiet). A solve that does not converge within
    --max-iterations says so beside its roots.

    \b
    Examples:
      integrity solve fixtures/good/hubbard_ring6_u4.json --roots 4
      integrity solve fixtures/good/o2_sto3g_cas86.h5 --alpha 4 --beta 4 --two-s 0
    """
    from integrity.energies import solve as solve_hamiltonian
    from integrity.io import load
    from integrity.model.summary import irrep_names

    if (alpha is None) != (beta is None):
        raise click.UsageError("give both --alpha and --beta, or neither")
    if electrons is not None and alpha is not None:
        raise click.UsageError("give --electrons or --alpha/--beta, not both")
    ham = load(file, memory=memory)
    engines = ("native", "pyscf") if engine == "both" else (engine,)
    status = solve_status(quiet)
    try:
        with options_named(SOLVE_OPTIONS):
            results = [
                solve_hamiltonian(
                    ham,
                    alpha=alpha,
                    beta=beta,
                    electrons=electrons,
                    roots=roots,
                    two_s=two_s,
                    irrep=irrep,
                    engine=name,
                    memory=memory,
                    tol=convergence,
                    max_iter=max_iterations,
                    progress=None if status is None else status.solve,
                )
                for name in engines
            ]
    finally:
        if status is not None:
            status.close()
    names = irrep_names(ham)
    if output_format == "json":
        click.echo(as_json({"path": file, "irrep_names": names, "results": [r.as_dict() for r in results]}))
    else:
        click.echo(solve_text(file, results, names))
