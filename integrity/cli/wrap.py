"""``integrity wrap ARRAYS.npz OUT``: plain arrays into a Hamiltonian file."""

from __future__ import annotations

import click

from integrity.cli.options import guarded, overwrite_option


@click.command(short_help="Wrap plain arrays (.npz) into a file.")
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
@overwrite_option()
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
    overwrite,
):
    """Wrap plain arrays from ARRAYS.npz (one_electron, two_electron, optional core_energy,
    irreps) into a Hamiltonian file OUT. Notation, electron counts and basis are never guessed.

    \b
    Example:
      integrity wrap ints.npz h2.h5 --notation chemist --alpha 1 --beta 1 --basis restricted
    """
    from integrity.io import save
    from integrity.producers import wrap_arrays

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
    save(ham, out, overwrite=overwrite)
    click.echo(f"wrote {out}")
