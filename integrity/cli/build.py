"""``integrity build OUT``: a Hamiltonian file from a molecule, with pyscf."""

from __future__ import annotations

import click

from integrity.cli.options import guarded, options_named, overwrite_option, require_new_output
from integrity.cli.render import printable


def _cas(ctx, param, value):
    if value is None:
        return None
    try:
        electrons, orbitals = (int(part) for part in value.split(","))
    except ValueError:
        raise click.BadParameter("expected ELECTRONS,ORBITALS such as 6,6") from None
    if electrons < 0 or orbitals < 1:
        raise click.BadParameter("needs electrons >= 0 and orbitals >= 1")
    return electrons, orbitals


@click.command(short_help="Build a file from a molecule with pyscf.")
@click.argument("out", type=click.Path(dir_okay=False))
@click.option(
    "--geometry",
    required=True,
    multiple=True,
    metavar="XYZ|LINE",
    help="An .xyz file, or one atom line 'SYMBOL X Y Z' per use (repeatable).",
)
@click.option("--unit", type=click.Choice(["angstrom", "bohr"]), default="angstrom", show_default=True)
@click.option("--basis-set", required=True, help="Gaussian basis set, e.g. sto-3g, cc-pvdz.")
@click.option("--charge", type=int, default=0, show_default=True)
@click.option(
    "--two-s",
    type=click.IntRange(min=0),
    default=0,
    show_default=True,
    help="2S of the state: 0 singlet, 1 doublet, 2 triplet.",
)
@click.option("--cas", callback=_cas, metavar="E,O", help="Active space: E electrons in O orbitals; the rest frozen.")
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
@overwrite_option()
@guarded
def build(
    out,
    geometry,
    unit,
    basis_set,
    charge,
    two_s,
    cas,
    unrestricted,
    no_symmetry,
    max_fci_determinants,
    title,
    overwrite,
):
    """Build a Hamiltonian file OUT from a molecule with pyscf (SCF, optional active space,
    hf and fci references, provenance).

    \b
    Examples:
      integrity build h2.h5 --geometry "H 0 0 0" --geometry "H 0 0 1.4" --unit bohr --basis-set sto-3g
      integrity build water.json --geometry water.xyz --basis-set cc-pvdz --cas 4,4
    """
    from integrity.io import read_geometry, save
    from integrity.producers import build as build_hamiltonian
    from integrity.producers.molecule import require_buildable

    source = geometry[0] if len(geometry) == 1 and geometry[0].lower().endswith(".xyz") else list(geometry)
    require_new_output(out, overwrite, inputs=[source] if isinstance(source, str) else [])
    with options_named({"two_s": "--two-s", "charge": "--charge", "active": "--cas"}):
        require_buildable(read_geometry(source), unit=unit, charge=charge, two_s=two_s, active=cas)
    ham = build_hamiltonian(
        source,
        basis_set,
        unit=unit,
        charge=charge,
        two_s=two_s,
        unrestricted=unrestricted,
        active=cas,
        symmetry=not no_symmetry,
        max_fci_determinants=max_fci_determinants,
        title=title,
    )
    save(ham, out, overwrite=overwrite)
    energies = ", ".join(f"{r.label} {r.energy:.10f}" for r in ham.references)
    group = f", point group {ham.orbitals.point_group}" if ham.orbitals.point_group else ""
    click.echo(f"wrote {printable(out)}: {ham.n} {ham.basis} orbitals{group}, {energies}")
