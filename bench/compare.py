"""compare and reduce: time and memory against a plain NumPy pass and against pyscf.

* ``compare`` of a random restricted Hamiltonian (n orbitals) with a copy whose
  orbitals are reordered and sign-flipped (rung 3, the relabelling search and
  its verification), against one NumPy pass that only diffs the two dense
  two-electron arrays (``numpy.max(numpy.abs(b - a))``); peak memory
  (tracemalloc) in copies of one dense array.
* the same for a Hubbard ring, whose sites the invariants cannot tell apart,
  so the search has to branch (nodes and leaves are printed).
* ``reduce_active_space`` of water cc-pVDZ (24 orbitals; 1 frozen, 12 active)
  against pyscf's CASCI ``get_h1eff`` + ``get_h2eff`` for the same orbitals
  (from a full-space file pyscf wrote before; both start from integrals in memory
  for integity, from the AO integrals for pyscf).

Best of ``--repeat`` runs; BLAS on one thread, as pyscf recommends for small work.

    python bench/compare.py            # n = 40 (2 x 20 MB)
    python bench/compare.py --quick    # n = 16, a smoke run
"""

from __future__ import annotations

import os

for _variable in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

import argparse  # noqa: E402
import gc  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402

import numpy as np  # noqa: E402

from integrity.compare import compare  # noqa: E402
from integrity.compare.relabel import find_relabelling  # noqa: E402
from integrity.compare.views import view_of  # noqa: E402
from integrity.convert import convert, reduce_active_space  # noqa: E402
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron  # noqa: E402
from integrity.testing import hubbard, random_hamiltonian  # noqa: E402

WATER = "O 0.0 0.0 0.1173; H 0.0 0.7572 -0.4692; H 0.0 -0.7572 -0.4692"


def best_time(action, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        gc.collect()
        start = time.perf_counter()
        action()
        best = min(best, time.perf_counter() - start)
    return best


def peak_bytes(action) -> int:
    gc.collect()
    tracemalloc.start()
    try:
        before = tracemalloc.get_traced_memory()[0]
        action()
        return tracemalloc.get_traced_memory()[1] - before
    finally:
        tracemalloc.stop()


def relabelled_pair(ham: Hamiltonian, seed: int):
    rng = np.random.default_rng(seed)
    order = rng.permutation(ham.n)
    signs = rng.choice([-1, 1], ham.n)
    return ham, convert(ham, orbital_order=order, orbital_signs=signs).hamiltonian


def report_compare(name: str, a: Hamiltonian, b: Hamiltonian, repeat: int) -> None:
    g_a, g_b = np.asarray(a.two_electron.array), np.asarray(b.two_electron.array)
    numpy_pass = best_time(lambda: np.max(np.abs(g_b - g_a)), repeat)
    ours = best_time(lambda: compare(a, b), repeat)
    verdict = compare(a, b)
    search = find_relabelling(view_of(a), view_of(b), 1e-10)
    extra = peak_bytes(lambda: compare(a, b)) / g_a.nbytes
    print(
        f"{name}: rung {verdict.rung} ({verdict.name}), {search.nodes} nodes, {search.leaves} leaves; "
        f"compare {ours:.3g} s, numpy pass {numpy_pass:.3g} s, ratio {ours / numpy_pass:.0f}; "
        f"peak extra memory {extra:.1f} arrays of {g_a.nbytes / 2**20:.1f} MiB"
    )


def full_space(mf) -> Hamiltonian:
    from pyscf import ao2mo, mcscf

    nmo = mf.mo_coeff.shape[1]
    cas = mcscf.CASCI(mf, nmo, mf.mol.nelectron, ncore=0)
    h1, _ = cas.get_h1eff()
    eri = ao2mo.restore(1, cas.get_h2eff(), nmo)
    occupied = tuple(int(p) for p in np.flatnonzero(mf.mo_occ > 1.5))
    from integrity.model.hamiltonian import Reference

    enuc = float(mf.mol.energy_nuc())
    return Hamiltonian(
        Orbitals(nmo, "restricted"),
        Electrons(mf.mol.nelectron // 2, mf.mol.nelectron // 2),
        enuc,
        h1,
        TwoElectron(eri, "chemist"),
        core_energy_parts={"nuclear_repulsion": enuc},
        references=(Reference("hf", "hf", float(mf.e_tot), occupation=(occupied, occupied)),),
    )


def report_reduce(basis: str, frozen: int, active: int, repeat: int) -> None:
    from pyscf import ao2mo, gto, mcscf, scf

    mol = gto.M(atom=WATER, basis=basis, verbose=0)
    mf = scf.RHF(mol)
    mf.kernel()
    full = full_space(mf)
    chosen = range(frozen, frozen + active)
    cas = mcscf.CASCI(mf, active, mol.nelectron - 2 * frozen, ncore=frozen)

    def pyscf_way():
        cas.get_h1eff()
        ao2mo.restore(1, cas.get_h2eff(), active)

    ours = best_time(lambda: reduce_active_space(full, frozen=range(frozen), active=chosen), repeat)
    theirs = best_time(pyscf_way, repeat)
    reduced = reduce_active_space(full, frozen=range(frozen), active=chosen).hamiltonian
    h1, ecore = cas.get_h1eff()
    deviation = max(float(np.max(np.abs(reduced.one_electron - h1))), abs(reduced.core_energy - ecore))
    print(
        f"reduce water {basis} ({full.n} orbitals -> {frozen} frozen, {active} active): {ours:.3g} s, "
        f"pyscf CASCI get_h1eff + get_h2eff {theirs:.3g} s, ratio {ours / theirs:.2f}; "
        f"largest difference {deviation:.1e}"
    )


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, a smoke run")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    n, sites = (16, 8) if args.quick else (40, 12)
    report_compare(
        f"random restricted n = {n}", *relabelled_pair(random_hamiltonian("restricted", n, seed=1), 2), args.repeat
    )
    h, g = hubbard(sites, t=1.0, u=4.0, periodic=True)
    ring = Hamiltonian(
        Orbitals(sites, "restricted"),
        Electrons(sites // 2, sites // 2),
        0.0,
        h,
        TwoElectron(g, "chemist", interaction="model"),
    )
    report_compare(f"Hubbard ring of {sites} sites", *relabelled_pair(ring, 3), args.repeat)
    report_reduce("sto-3g" if args.quick else "cc-pvdz", 1, 6 if args.quick else 12, args.repeat)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
