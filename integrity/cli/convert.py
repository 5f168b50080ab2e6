"""``integrity convert IN OUT``: another notation, storage, basis, layout or container."""

from __future__ import annotations

import click

from integrity.cli.options import ORBITAL_ORDER, ORBITAL_SIGNS, guarded, memory_option, overwrite_option
from integrity.cli.render import conversion_text


@click.command(short_help="Convert a file into another form or container.")
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
    "--orbital-order",
    type=ORBITAL_ORDER,
    help="Orbital p of OUT is orbital ORDER[p]: 0-based indices, ranges allowed (2,0,1,3-6); alpha/beta lists "
    "for unrestricted files.",
)
@click.option(
    "--orbital-signs",
    type=ORBITAL_SIGNS,
    help="Multiply orbital p of OUT by SIGNS[p]: one + or - per orbital (+-++); alpha/beta for unrestricted files.",
)
@click.option(
    "--exchange-spins", is_flag=True, help="Exchange alpha and beta (counts, blocks, occupations) before reordering."
)
@click.option(
    "--tolerance",
    type=float,
    default=1e-10,
    show_default=True,
    help="Largest deviation a lossy step may drop without --allow-loss (hartree).",
)
@overwrite_option()
@click.option("--allow-loss", is_flag=True, help="Do lossy steps beyond the tolerance (recorded in the history).")
@click.option(
    "--accept-checksum-mismatch",
    is_flag=True,
    help="Convert a file whose checksum does not match its content (recorded in the history).",
)
@memory_option("Largest array IN may declare.")
@guarded
def convert(
    in_path,
    out_path,
    notation,
    storage,
    basis,
    spin_layout,
    antisymmetrize,
    orbital_order,
    orbital_signs,
    exchange_spins,
    tolerance,
    overwrite,
    allow_loss,
    accept_checksum_mismatch,
    memory,
):
    """Convert IN into a new file OUT; the container follows OUT's extension (.h5, .hdf5, .json).

    Several steps in one call, applied in the order basis, spin layout,
    notation, antisymmetrization, relabelling, storage. A step that would lose
    information is refused unless --allow-loss; the fingerprint changes only
    when the Hamiltonian's content does (basis, layout, antisymmetrization,
    orbital order and signs). --orbital-order and --orbital-signs take the form
    `integrity compare` prints: they refer to the orbitals of the result's basis.

    \b
    Examples:
      integrity convert h2.h5 h2.json
      integrity convert h2.h5 h2_so.json --basis spin-orbital --notation physicist --antisymmetrize
      integrity convert n2.h5 n2_packed.h5 --storage unique
      integrity convert a.h5 a_as_b.h5 --orbital-order 0,3,1-2 --orbital-signs +-++
    """
    from integrity.convert import convert_file

    result = convert_file(
        in_path,
        out_path,
        overwrite=overwrite,
        memory=memory,
        notation=notation,
        storage=storage,
        basis=basis,
        spin_layout=spin_layout,
        antisymmetrize=antisymmetrize,
        orbital_order=orbital_order,
        orbital_signs=orbital_signs,
        exchange_spins=exchange_spins,
        allow_loss=allow_loss,
        accept_checksum_mismatch=accept_checksum_mismatch,
        tolerance=tolerance,
    )
    click.echo(conversion_text(result, out_path))
