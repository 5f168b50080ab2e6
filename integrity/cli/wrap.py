"""``integrity wrap ARRAYS.npz OUT``: plain arrays into a Hamiltonian file."""

from __future__ import annotations

import click

from integrity.cli.options import FINITE, guarded, options_named, overwrite_option, require_new_output
from integrity.cli.render import printable


def _references(ctx, param, values):
    from integrity.errors import FieldError
    from integrity.producers.from_arrays import parse_reference

    try:
        return tuple(parse_reference(text) for text in values)
    except FieldError as err:
        raise click.BadParameter(err.reason) from None


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
    type=FINITE,
    help="Energy with no electron operator (hartree); required when the .npz has no core_energy.",
)
@click.option("--interaction", type=click.Choice(["coulomb", "model"]), help="Default coulomb.")
@click.option("--antisymmetrized", is_flag=True, help="two_electron holds <pq||rs> (spin-orbital physicist).")
@click.option(
    "--reference",
    "references",
    multiple=True,
    callback=_references,
    metavar="LABEL=E[,KEY=V...]",
    help="An energy the file must reproduce (hartree, repeatable): LABEL=ENERGY, then optional method=hf|fci "
    "(default: the label, when it is hf or fci), alpha=, beta= (the sector; default the file's), two_s=, "
    "irrep=, root=, tolerance=. Example: fci=-1.1372838,two_s=0",
)
@click.option(
    "--widen-float32",
    is_flag=True,
    help="Store float32 (complex64) arrays as float64 (complex128), recorded in the history; "
    "without it they are refused.",
)
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
    references,
    widen_float32,
    title,
    overwrite,
):
    """Wrap plain arrays from ARRAYS.npz (one_electron, two_electron, optional core_energy,
    irreps) into a Hamiltonian file OUT. Notation, electron counts and basis are never guessed;
    shapes, dtypes and counts are checked before anything is written.

    \b
    Examples:
      integrity wrap ints.npz h2.h5 --notation chemist --alpha 1 --beta 1 --basis restricted
      integrity wrap ints.npz h2.h5 --notation chemist --alpha 1 --beta 1 --basis restricted \\
          --reference hf=-1.1167593 --reference fci=-1.1372838,two_s=0
    """
    from integrity.io import save
    from integrity.producers import wrap_arrays

    require_new_output(out, overwrite, inputs=[arrays])
    with options_named({"alpha": "--alpha", "beta": "--beta"}):
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
            references=references,
            widen_float32=widen_float32,
        )
    save(ham, out, overwrite=overwrite)
    stored = f", references {', '.join(printable(r.label) for r in ham.references)}" if ham.references else ""
    click.echo(f"wrote {printable(out)}: {ham.n} {ham.basis} orbitals{stored}")
