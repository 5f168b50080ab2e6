"""The ``integrity`` command: a thin layer over the library.

Exit status: 0 success (every file passes); 1 at least one file failed a check
(or ``diagnose`` found a mismatch); 2 a file could not be read, or the command
was used wrongly. Errors are one line on stderr naming the file and the field;
``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import functools
import json

import click

from . import __version__
from .errors import IntegrityError
from .io import DEFAULT_MEMORY, load, parse_bytes, save

EXIT_OK, EXIT_FAILED, EXIT_UNUSABLE = 0, 1, 2


class MemorySize(click.ParamType):
    """A memory size such as 512MiB or 4GiB."""

    name = "size"

    def convert(self, value, param, ctx):
        if isinstance(value, int):
            return value
        try:
            return parse_bytes(value)
        except ValueError as err:
            self.fail(str(err), param, ctx)


MEMORY = MemorySize()


def guarded(command):
    """Turn the project's errors into one line on stderr and exit status 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        ctx = click.get_current_context()
        try:
            return command(*args, **kwargs)
        except IntegrityError as err:
            if ctx.find_root().params.get("debug"):
                raise
            click.echo(f"error: {err}", err=True)
            ctx.exit(EXIT_UNUSABLE)

    return wrapper


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="integrity")
@click.option("--debug", is_flag=True, help="Show a traceback instead of a one-line error.")
def main(debug):
    """Validate, solve and convert molecular Hamiltonian files (HDF5 and JSON).

    \b
    Examples:
      integrity check fixtures/
      integrity show fixtures/good/water_sto3g.h5
      integrity solve fixtures/good/hubbard_ring6.json --roots 3
    """


def _tolerance(ctx, param, values):
    out = {}
    for text in values:
        name, sep, number = text.partition("=")
        try:
            if not sep:
                raise ValueError
            out[name.strip()] = float(number)
        except ValueError:
            raise click.BadParameter(f"expected ID=VALUE such as energy.hf=1e-8, got {text!r}") from None
        if not out[name.strip()] > 0:
            raise click.BadParameter(f"a tolerance must be positive, got {text!r}")
    return out


ENGINES = click.Choice(["native", "pyscf", "both"])


def memory_option(help_text: str):
    return click.option("--memory", type=MEMORY, default=str(DEFAULT_MEMORY), show_default="4GiB", help=help_text)


def format_option(help_text: str = "Text for people, JSON for programs."):
    return click.option(
        "--format",
        "output_format",
        type=click.Choice(["text", "json"]),
        default="text",
        show_default=True,
        help=help_text,
    )


def engine_option(help_text: str):
    return click.option("--engine", type=ENGINES, default="native", show_default=True, help=help_text)


@main.command()
@click.argument("paths", nargs=-1, required=True, type=click.Path(exists=True))
@format_option("Text for people, JSON (schemas/report.schema.json) for programs.")
@click.option("--select", multiple=True, metavar="ID", help="Run only this check (repeatable).")
@click.option("--skip", multiple=True, metavar="ID", help="Do not run this check (repeatable).")
@click.option(
    "--tolerance",
    multiple=True,
    metavar="ID=VALUE",
    callback=_tolerance,
    help="Limit for one check, e.g. energy.hf=1e-8 (repeatable).",
)
@engine_option("Full-CI engine for energy.fci; both: a disagreement fails.")
@memory_option("Memory budget; larger arrays are checked block by block.")
@click.option("--strict", is_flag=True, help="A warning fails the file.")
@click.option("--list", "list_checks", is_flag=True, help="List the check ids and exit.")
@guarded
def check(paths, output_format, select, skip, tolerance, engine, memory, strict, list_checks):
    """Check Hamiltonian files; folders are searched for *.h5, *.hdf5 and *.json.

    Prints one line per passing file and, for a failing file, one line per
    failing check with its value, limit, where and likely cause. Exit status
    0 all pass, 1 a file failed, 2 a file could not be read.

    \b
    Examples:
      integrity check fixtures/good
      integrity check run.h5 --select energy.hf --tolerance energy.hf=1e-8
      integrity check data/ --format json > report.json
    """
    from .checks import REGISTRY, check_ids, check_paths, find_files
    from .report import render_text, report_document

    if list_checks:
        for check_id in check_ids():
            spec = REGISTRY[check_id]
            limit = "" if spec.limit is None else f" (limit {spec.limit:g})"
            click.echo(f"{check_id:<24}{spec.summary}{limit}")
        return
    if not find_files(paths):
        raise click.UsageError("no *.h5, *.hdf5 or *.json files under the paths given")
    reports = check_paths(
        paths, select=select, skip=skip, tolerances=tolerance, memory=memory, engine=engine, strict=strict
    )
    if output_format == "json":
        click.echo(json.dumps(report_document(reports, strict), indent=2))
    else:
        click.echo(render_text(reports, strict))
    if any(r.status == "error" for r in reports):
        raise SystemExit(EXIT_UNUSABLE)
    if any(r.status == "fail" for r in reports):
        raise SystemExit(EXIT_FAILED)


@main.command()
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
@format_option()
@guarded
def solve(file, roots, alpha, beta, electrons, two_s, irrep, engine, memory, output_format):
    """Full-CI energies of the lowest states of FILE, with their 2S (and irrep).

    \b
    Examples:
      integrity solve fixtures/good/hubbard_ring6_u4.json --roots 4
      integrity solve fixtures/good/o2_sto3g_cas86.h5 --alpha 4 --beta 4 --two-s 0
    """
    from .fullci import solve as solve_hamiltonian

    if (alpha is None) != (beta is None):
        raise click.UsageError("give both --alpha and --beta, or neither")
    if electrons is not None and alpha is not None:
        raise click.UsageError("give --electrons or --alpha/--beta, not both")
    ham = load(file, memory=memory)
    engines = ("native", "pyscf") if engine == "both" else (engine,)
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
        )
        for name in engines
    ]
    if output_format == "json":
        click.echo(json.dumps({"path": file, "results": [_solution_dict(r) for r in results]}, indent=2))
    else:
        click.echo(_solution_text(file, results))


def _solution_dict(result) -> dict:
    return {
        "engine": result.engine,
        "alpha": result.n_alpha,
        "beta": result.n_beta,
        "electrons": result.n_electrons,
        "determinants": result.determinants,
        "iterations": result.iterations,
        "memory_estimate": result.memory_estimate,
        "notes": list(result.notes),
        "roots": [
            {
                "energy": r.energy,
                "two_s": r.two_s,
                "s_squared": r.s_squared,
                "irrep": r.irrep,
                "residual": r.residual_norm,
                "converged": r.converged,
            }
            for r in result.roots
        ],
    }


def _solution_text(path, results) -> str:
    lines = [str(path)]
    for result in results:
        counts = (
            f"{result.n_alpha} alpha, {result.n_beta} beta"
            if result.n_alpha is not None
            else f"{result.n_electrons} electrons"
        )
        lines.append(
            f"  {result.engine}: {counts}, {result.determinants} determinants"
            + (f", {result.iterations} iterations" if result.iterations is not None else "")
        )
        lines.append(f"  {'root':>6} {'energy / hartree':>20} {'2S':>4} {'<S^2>':>10} {'irrep':>6} {'residual':>10}")
        for index, root in enumerate(result.roots):
            two_s = "-" if root.two_s is None else str(root.two_s)
            s2 = "-" if root.s_squared is None else f"{root.s_squared:.6f}"
            irrep = "-" if root.irrep is None else str(root.irrep)
            flag = "" if root.converged else "  (not converged)"
            lines.append(
                f"  {index:>6} {root.energy:>20.10f} {two_s:>4} {s2:>10} {irrep:>6} {root.residual_norm:>10.1e}{flag}"
            )
        lines += [f"  note: {note}" for note in result.notes]
    return "\n".join(lines)


@main.command()
@click.argument("in_path", metavar="IN", type=click.Path(exists=True, dir_okay=False))
@click.argument("out_path", metavar="OUT", type=click.Path(dir_okay=False))
@click.option("--notation", type=click.Choice(["chemist", "physicist"]), help="Index order of the result.")
@click.option("--storage", type=click.Choice(["dense", "pairs", "unique"]), help="Packing of the result.")
@click.option(
    "--basis", type=click.Choice(["restricted", "unrestricted", "spin-orbital"]), help="Orbital basis of the result."
)
@click.option(
    "--spin-layout", type=click.Choice(["interleaved", "blocked"]), help="Spin-orbital order (default interleaved)."
)
@click.option("--antisymmetrize", is_flag=True, help="Store <pq||rs> (spin-orbital, physicist; cannot be undone).")
@click.option(
    "--tolerance",
    type=float,
    default=1e-10,
    show_default=True,
    help="Largest deviation a lossy step may drop without --force (hartree).",
)
@click.option(
    "--force",
    is_flag=True,
    help="Replace OUT if it exists; do lossy steps beyond the tolerance (recorded in the history); "
    "accept a damaged checksum. IN is never replaced.",
)
@guarded
def convert(in_path, out_path, notation, storage, basis, spin_layout, antisymmetrize, tolerance, force):
    """Convert IN into a new file OUT; the container follows OUT's extension (.h5, .hdf5, .json).

    Several steps in one call, applied in the order basis, spin layout,
    notation, antisymmetrization, storage. A step that would lose information
    is refused unless --force; the fingerprint changes only when the
    Hamiltonian's content does (basis, layout, antisymmetrization).

    \b
    Examples:
      integrity convert h2.h5 h2.json
      integrity convert h2.h5 h2_so.json --basis spin-orbital --notation physicist --antisymmetrize
      integrity convert n2.h5 n2_packed.h5 --storage unique
    """
    from .convert import convert_file

    result = convert_file(
        in_path,
        out_path,
        force_overwrite=force,
        notation=notation,
        storage=storage,
        basis=basis,
        spin_layout=spin_layout,
        antisymmetrize=antisymmetrize,
        force=force,
        tolerance=tolerance,
    )
    for step in result.steps:
        dropped = f", dropped up to {step['dropped_max_deviation']:.3g}" if "dropped_max_deviation" in step else ""
        changed = " (new fingerprint)" if step.get("fingerprint_changed") else ""
        click.echo(f"{step['step']}: {step['from']} -> {step['to']}{dropped}{changed}")
    click.echo(f"wrote {out_path} ({result.hamiltonian.checksum})")


@main.command()
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--expected", type=float, help="The energy someone expected (hartree).")
@click.option("--reference", "label", metavar="LABEL", help="Explain a stored reference instead.")
@click.option(
    "--method",
    type=click.Choice(["hf", "fci"]),
    help="What the expected energy is: the determinant (hf) or full CI (default fci).",
)
@click.option("--tolerance", type=float, default=1e-6, show_default=True, help="Hartree.")
@memory_option("Memory budget.")
@format_option()
@guarded
def diagnose(file, expected, label, method, tolerance, memory, output_format):
    """Explain why FILE does not give an expected energy: each known mistake is re-enacted
    (notation, alpha/beta swap, electron count, spin state, constants, factor of two, layout).
    Exit status 0 when the energy matches as stored, 1 when it does not.

    \b
    Examples:
      integrity diagnose fixtures/damaged/n2_core_energy_dropped.json --reference fci
      integrity diagnose run.h5 --expected -1.137270 --method fci
    """
    from .diagnose import diagnose as explain
    from .diagnose import render

    if (expected is None) == (label is None):
        raise click.UsageError("give --expected E or --reference LABEL")
    finding = explain(
        load(file, memory=memory), expected=expected, reference=label, method=method, tolerance=tolerance, memory=memory
    )
    if output_format == "json":
        click.echo(
            json.dumps(
                {
                    "path": file,
                    "expected": finding.expected,
                    "method": finding.method,
                    "computed": finding.computed,
                    "difference": finding.difference,
                    "tolerance": finding.tolerance,
                    "matches": finding.matches,
                    "hypotheses": [
                        {
                            "name": h.name,
                            "description": h.description,
                            "energy": h.energy,
                            "matches": h.matches,
                            "note": h.note,
                        }
                        for h in finding.hypotheses
                    ],
                },
                indent=2,
            )
        )
    else:
        click.echo(render(finding, file))
    if not finding.matches:
        raise SystemExit(EXIT_FAILED)


@main.command()
@click.argument("file", type=click.Path(dir_okay=False))
@format_option("Text for people, JSON for programs.")
@memory_option("Largest array the file may declare.")
@guarded
def show(file, output_format, memory):
    """Summarize FILE: basis, counts, notation, storage, norms, fingerprint, references.

    \b
    Example:
      integrity show fixtures/good/lih_sto3g.h5
    """
    from .summary import render_summary, summarize

    summary = summarize(load(file, memory=memory))
    if output_format == "json":
        click.echo(json.dumps({"path": file, **summary}, indent=2))
    else:
        click.echo(render_summary(file, summary))


@main.command()
@click.argument("arrays", type=click.Path(exists=True, dir_okay=False))
@click.argument("out", type=click.Path(dir_okay=False))
@click.option(
    "--notation",
    type=click.Choice(["chemist", "physicist"]),
    required=True,
    help="Index order of two_electron: chemist (pq|rs) or physicist <pq|rs>.",
)
@click.option("--alpha", type=click.IntRange(min=0), required=True, help="Alpha electrons.")
@click.option("--beta", type=click.IntRange(min=0), required=True, help="Beta electrons.")
@click.option(
    "--basis",
    type=click.Choice(["restricted", "unrestricted", "spin-orbital"]),
    required=True,
    help="Orbital basis of the arrays.",
)
@click.option("--spin-layout", type=click.Choice(["interleaved", "blocked"]), help="Required for --basis spin-orbital.")
@click.option(
    "--storage",
    type=click.Choice(["dense", "pairs", "unique"]),
    help="Storage of two_electron; read from its number of axes when omitted.",
)
@click.option(
    "--core-energy",
    type=float,
    help="Energy with no electron operator (hartree); required when the .npz has no core_energy.",
)
@click.option("--interaction", type=click.Choice(["coulomb", "model"]), help="Default coulomb.")
@click.option("--antisymmetrized", is_flag=True, help="two_electron holds <pq||rs> (spin-orbital physicist).")
@click.option("--title", help="One line for people.")
@click.option("--force", is_flag=True, help="Replace OUT if it exists.")
@guarded
def wrap(
    arrays,
    out,
    notation,
    alpha,
    beta,
    basis,
    spin_layout,
    storage,
    core_energy,
    interaction,
    antisymmetrized,
    title,
    force,
):
    """Wrap plain arrays from ARRAYS.npz (one_electron, two_electron, optional core_energy,
    irreps) into a Hamiltonian file OUT. Notation, electron counts and basis are never guessed.

    \b
    Example:
      integrity wrap ints.npz h2.h5 --notation chemist --alpha 1 --beta 1 --basis restricted
    """
    from .wrap import wrap_arrays

    ham = wrap_arrays(
        arrays,
        notation=notation,
        alpha=alpha,
        beta=beta,
        basis=basis,
        spin_layout=spin_layout,
        storage=storage,
        core_energy=core_energy,
        interaction=interaction,
        antisymmetrized=antisymmetrized or None,
        title=title,
    )
    save(ham, out, force=force)
    click.echo(f"wrote {out}")


def _active(ctx, param, value):
    if value is None:
        return None
    try:
        electrons, orbitals = (int(part) for part in value.split(","))
    except ValueError:
        raise click.BadParameter("expected ELECTRONS,ORBITALS such as 6,6") from None
    if electrons < 0 or orbitals < 1:
        raise click.BadParameter("needs electrons >= 0 and orbitals >= 1")
    return electrons, orbitals


@main.command()
@click.argument("out", type=click.Path(dir_okay=False))
@click.option("--atom", required=True, help='Geometry inline ("H 0 0 0; H 0 0 0.74") or an .xyz file.')
@click.option("--unit", type=click.Choice(["angstrom", "bohr"]), default="angstrom", show_default=True)
@click.option("--basis", "basis_set", required=True, help="Gaussian basis set, e.g. sto-3g, cc-pvdz.")
@click.option("--charge", type=int, default=0, show_default=True)
@click.option(
    "--two-s",
    type=click.IntRange(min=0),
    default=0,
    show_default=True,
    help="2S of the state: 0 singlet, 1 doublet, 2 triplet.",
)
@click.option("--active", callback=_active, help="Active space ELECTRONS,ORBITALS; the rest frozen as core.")
@click.option("--unrestricted", is_flag=True, help="UHF orbitals (an unrestricted file).")
@click.option("--no-symmetry", is_flag=True, help="Do not detect the point group.")
@click.option(
    "--max-fci-determinants",
    type=click.IntRange(min=1),
    default=1_000_000,
    show_default=True,
    help="Store an fci reference only for spaces up to this size.",
)
@click.option("--title", help="One line for people.")
@click.option("--force", is_flag=True, help="Replace OUT if it exists.")
@guarded
def build(
    out, atom, unit, basis_set, charge, two_s, active, unrestricted, no_symmetry, max_fci_determinants, title, force
):
    """Build a Hamiltonian file OUT from a molecule with pyscf (SCF, optional active space,
    hf and fci references, provenance).

    \b
    Example:
      integrity build h2.h5 --atom "H 0 0 0; H 0 0 1.4" --unit bohr --basis sto-3g
    """
    from .build import build as build_hamiltonian

    ham = build_hamiltonian(
        atom,
        basis_set,
        unit=unit,
        charge=charge,
        two_s=two_s,
        unrestricted=unrestricted,
        active=active,
        symmetry=not no_symmetry,
        max_fci_determinants=max_fci_determinants,
        title=title,
    )
    save(ham, out, force=force)
    energies = ", ".join(f"{r.label} {r.energy:.10f}" for r in ham.references)
    click.echo(f"wrote {out}: {ham.n} {ham.basis} orbitals, {energies}")
