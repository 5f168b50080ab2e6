"""What the fork server of local workers loads once, so every worker starts ready.

Importing this module imports the per-file job (and with it numpy, h5py,
scipy, pyscf and the checks) and compiles the Hamiltonian schema validators
for both containers; a worker forked from the server, or a replacement for a
worker that crashed, judges its first file without paying for either.
"""

from integrity.batch.job import judge
from integrity.io.schema import schema_problems

for _entry in ("json_document", "hdf5_tree"):
    schema_problems({}, _entry)

__all__ = ["judge"]
