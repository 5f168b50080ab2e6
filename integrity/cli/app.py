"""The ``integrity`` command group: the subcommands, in the order a user meets them."""

from __future__ import annotations

import click

from integrity._version import __version__
from integrity.cli.build import build
from integrity.cli.check import check
from integrity.cli.compare import compare
from integrity.cli.convert import convert
from integrity.cli.diagnose import diagnose
from integrity.cli.reduce import reduce
from integrity.cli.show import show
from integrity.cli.solve import solve
from integrity.cli.wrap import wrap

COMMANDS = (check, show, solve, diagnose, compare, convert, reduce, wrap, build)


class _InOrder(click.Group):
    """Lists the subcommands in the order registered, not alphabetically."""

    def list_commands(self, ctx):
        return list(self.commands)


@click.group(cls=_InOrder, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="integrity")
@click.option("--debug", is_flag=True, help="Show a traceback instead of a one-line error.")
def main(debug):
    """Validate, solve and convert molecular Hamiltonian files (HDF5 and JSON).

    \b
    Examples:
      integrity check fixtures/
      integrity show fixtures/good/lih_sto3g.h5
      integrity solve fixtures/good/hubbard_ring6_u4.json --roots 3
    """


for _command in COMMANDS:
    main.add_command(_command)
