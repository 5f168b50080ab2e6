"""``integrity reduce IN OUT``: cut an active space out of a larger file."""

from __future__ import annotations

import click

from integrity.cli.options import ORBITAL_LIST, guarded, memory_option, overwrite_option
from integrity.cli.render import conversion_text


@click.command(short_help="Cut an active space out of a larger file.")
@click.argument("in_path", metavar="IN", type=click.Path(exists=True, dir_okay=False))
@click.argument("out_path", metavar="OUT", type=click.Path(dir_okay=False))
@click.option(
    "--frozen",
    type=ORBITAL_LIST,
    help="Doubly occupied orbitals folded into the core energy: 0-based, ranges allowed (0-3,7).",
)
@click.option("--active", type=ORBITAL_LIST, required=True, help="Orbitals kept, as for --frozen.")
@click.option(
    "--allow-open-frozen",
    is_flag=True,
    help="Freeze orbitals the hf reference does not fill twice (recorded; that reference is dropped).",
)
@click.option("--solve", "solve_references", is_flag=True, help="Recompute full-CI references in the new space.")
@overwrite_option()
@click.option(
    "--accept-checksum-mismatch",
    is_flag=True,
    help="Reduce a file whose checksum does not match its content (recorded in the history).",
)
@memory_option("Largest array IN may declare; budget for --solve.")
@guarded
def reduce(
    in_path, out_path, frozen, active, allow_open_frozen, solve_references, overwrite, accept_checksum_mismatch, memory
):
    """Write OUT, the Hamiltonian of IN over the --active orbitals with the --frozen ones folded in.

    Frozen orbitals must be doubly occupied in IN's hf reference (or its lowest
    orbitals when it has none): their energy goes into core_energy (part
    frozen_core) and their mean field into the one-electron integrals,
    h_pq + sum_c [2 (pq|cc) - (pc|cq)] (per spin for unrestricted files, per spin
    orbital for spin-orbital ones). Orbitals in neither list are discarded.
    Electron counts, irreps and hf occupations follow; full-CI references are
    dropped, or recomputed with --solve. Indices are 0-based (spin orbitals in
    a spin-orbital file).

    \b
    Examples:
      integrity reduce water_631g.h5 water_cas66.h5 --frozen 0-1 --active 2-7
      integrity reduce n2_all.json n2_cas.json --frozen 0-3 --active 4-9 --solve
    """
    from integrity.convert import reduce_file

    result = reduce_file(
        in_path,
        out_path,
        frozen=frozen or (),
        active=active,
        overwrite=overwrite,
        memory=memory,
        allow_open_frozen=allow_open_frozen,
        solve_references=solve_references,
        accept_checksum_mismatch=accept_checksum_mismatch,
    )
    click.echo(conversion_text(result, out_path))
