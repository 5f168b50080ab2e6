"""Wrap plain arrays into a Hamiltonian, stating every convention explicitly."""

from __future__ import annotations

import numpy as np

from integrity.errors import FieldError
from integrity.io.npz import read_npz
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron

#: storage read from the number of axes of two_electron, per basis
STORAGE_BY_NDIM = {
    "restricted": {4: "dense", 2: "pairs", 1: "unique"},
    "spin-orbital": {4: "dense", 2: "pairs", 1: "unique"},
    "unrestricted": {5: "dense", 3: "pairs"},
}


def wrap_arrays(
    path,
    *,
    notation,
    alpha,
    beta,
    basis,
    spin_layout=None,
    storage=None,
    core_energy=None,
    interaction=None,
    antisymmetrized=None,
    title=None,
) -> Hamiltonian:
    """A Hamiltonian from an .npz of plain arrays and explicitly stated conventions.

    The core energy must come from the archive or the caller: a missing
    constant is one of the faults this project exists to catch.
    """
    arrays = read_npz(path)
    if "core_energy" in arrays and core_energy is not None:
        raise FieldError("core_energy", "given both in the archive and on the command line; give it once", str(path))
    if "core_energy" not in arrays and core_energy is None:
        raise FieldError(
            "core_energy", "not in the archive; state it with --core-energy (0 if there is none)", str(path)
        )
    ecore = float(arrays["core_energy"]) if "core_energy" in arrays else float(core_energy)
    one = np.asarray(arrays["one_electron"])
    two = np.asarray(arrays["two_electron"])
    one = one.astype(np.complex128 if one.dtype.kind == "c" else np.float64, copy=False)
    two = two.astype(np.complex128 if two.dtype.kind == "c" else np.float64, copy=False)
    if storage is None:
        storage = STORAGE_BY_NDIM[basis].get(two.ndim)
        if storage is None:
            raise FieldError("two_electron", f"{two.ndim} axes fit no storage of a {basis} file", str(path))
    count = one.shape[-1]
    irreps = tuple(int(i) for i in arrays["irreps"]) if "irreps" in arrays else None
    try:
        return Hamiltonian(
            orbitals=Orbitals(count=count, basis=basis, spin_layout=spin_layout, irreps=irreps),
            electrons=Electrons(alpha, beta),
            core_energy=ecore,
            one_electron=one,
            two_electron=TwoElectron(
                two, notation=notation, storage=storage, interaction=interaction, antisymmetrized=antisymmetrized
            ),
            title=title,
            provenance={"producer": "integrity wrap", "source": str(path)},
        )
    except FieldError as err:
        raise err.in_file(path) from None
