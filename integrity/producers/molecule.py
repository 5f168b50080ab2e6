"""Produce a Hamiltonian from a molecule with pyscf.

The orbitals are the SCF's canonical molecular orbitals (RHF for closed
shells, ROHF for open shells, UHF with ``unrestricted``). An active space
``(electrons, orbitals)`` keeps the ``orbitals`` orbitals above the lowest
``(N - electrons)/2`` doubly occupied ones, which are frozen: their energy
(with the nuclear repulsion) goes into ``core_energy`` and is recorded in
``core_energy_parts.frozen_core``, and their mean field into ``one_electron``.

References: ``hf`` (the SCF energy, with the occupied active orbitals) and,
when the determinant space is at most ``max_fci_determinants``, ``fci``
(pyscf's full CI for the lowest state of the SCF's 2S, with the irrep of
that state when the molecule has symmetry).

Irreps: pyscf's numbering for D2h and its subgroups, in which a product of
irreps is the XOR of their numbers, as the format requires. pyscf reduces
every non-abelian group to its largest abelian subgroup in that family
(Td to D2, Oh and D6h to D2h, C3v to Cs, ...) by itself; atoms (SO3) and
linear molecules (Dooh, Coov), which pyscf keeps, are described in D2h, or
C2v without inversion. ``orbitals.point_group`` is the group whose irreps are
stored, ``provenance.irrep_names`` the names of its irreps by number.

Everything cheap is checked before the SCF: the unit, element symbols,
atoms at one place, the electron count against the charge and 2S, the
active space against the electrons. pyscf's warnings are not passed on, and
its errors become one line.
"""

from __future__ import annotations

import warnings
from math import comb

import numpy as np

from integrity._version import __version__
from integrity.convert import history
from integrity.energies.nuclear import atomic_number, nuclear_repulsion
from integrity.errors import FieldError, UnsupportedError
from integrity.io.xyz import geometry_text, read_geometry
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, Reference, TwoElectron
from integrity.model.indexing import POINT_GROUP_ORDER

DEFAULT_MAX_FCI_DETERMINANTS = 1_000_000
#: groups pyscf keeps whose irreps are not D2h's: the abelian subgroup used instead
ABELIAN_SUBGROUP = {"SO3": "D2h", "Dooh": "D2h", "Coov": "C2v"}


def build(
    geometry,
    basis: str,
    *,
    unit: str = "angstrom",
    charge: int = 0,
    two_s: int = 0,
    unrestricted: bool = False,
    active: tuple[int, int] | None = None,
    symmetry: bool = True,
    max_fci_determinants: int = DEFAULT_MAX_FCI_DETERMINANTS,
    title: str | None = None,
    date: str | None = None,
) -> Hamiltonian:
    """Run the SCF with pyscf and return the (active-space) Hamiltonian with references.

    ``geometry`` is an ``.xyz`` file path, a text of atom lines ``SYMBOL X Y Z``, or a
    list of such lines (see :func:`integrity.io.read_geometry`), in ``unit``.

    ``date`` (YYYY-MM-DD) goes into the provenance; today's date (UTC) when None.
    """
    if unit not in ("angstrom", "bohr"):
        raise FieldError("unit", f"{unit!r} is not a unit; use 'angstrom' or 'bohr'")
    atoms = read_geometry(geometry)
    require_buildable(atoms, unit=unit, charge=charge, two_s=two_s, active=active)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # pyscf's basis-set notes are not ours to print
        return _build(
            atoms, basis, unit, charge, two_s, unrestricted, active, symmetry, max_fci_determinants, title, date
        )


def require_buildable(atoms, *, unit: str = "angstrom", charge: int = 0, two_s: int = 0, active=None) -> None:
    """Refuse, before any SCF, what cannot be built: unknown elements, atoms at one place, an electron count
    that the charge leaves negative or that cannot have 2S, an active space with more electrons than there are.

    >>> require_buildable([("H", (0.0, 0.0, 0.0)), ("H", (0.0, 0.0, 0.74))], two_s=1)
    Traceback (most recent call last):
    ...
    integrity.errors.FieldError: two_s: 2 electrons (charge 0) cannot have 2S = 1 (2S must have the parity of ...
    """
    nuclear_repulsion(atoms, unit)  # element symbols known, no two atoms at one place
    electrons = sum(atomic_number(symbol) for symbol, _ in atoms) - int(charge)
    if electrons < 1:
        raise FieldError("charge", f"charge {charge} leaves {electrons} electrons; a molecule needs at least one")
    count = f"{electrons} electron{'s' if electrons != 1 else ''} (charge {charge})"
    if two_s > electrons:
        raise FieldError("two_s", f"{count} cannot have 2S = {two_s} (at most {electrons})")
    if (electrons - two_s) % 2:
        raise FieldError("two_s", f"{count} cannot have 2S = {two_s} (2S must have the parity of the electron count)")
    if active is not None:
        n_active, _ = active
        if n_active > electrons or (electrons - n_active) % 2:
            raise FieldError(
                "active",
                f"{n_active} active electrons leave {electrons - n_active} of {electrons} "
                "for the frozen core, which needs an even, non-negative number",
            )
        if (n_active - two_s) % 2 or n_active < two_s:
            raise FieldError("active", f"{n_active} active electrons cannot have 2S = {two_s}")


def _build(atoms, basis, unit, charge, two_s, unrestricted, active, symmetry, max_fci_determinants, title, date):
    from pyscf import gto

    mol = _molecule(gto, [[symbol, xyz] for symbol, xyz in atoms], basis, unit, charge, two_s, symmetry)
    mf = _scf(mol, two_s, unrestricted)
    n_active_electrons, ncore, norb = _active_space(mol, mf, active)
    n_alpha = (n_active_electrons + two_s) // 2
    n_beta = (n_active_electrons - two_s) // 2
    h1, eri, ecore = _integrals(mf, ncore, norb, n_active_electrons, unrestricted)
    irreps = _active_irreps(mol, mf, ncore, norb, unrestricted)
    references = [_hf_reference(mf, ncore, norb, unrestricted)]
    space = comb(norb, n_alpha) * comb(norb, n_beta)
    if space <= max_fci_determinants:
        references.append(_fci_reference(h1, eri, ecore, norb, (n_alpha, n_beta), two_s, irreps, unrestricted))
    basis_kind = "unrestricted" if unrestricted else "restricted"
    scf_name = type(mf).__name__.replace("SymAdaptedR", "R").replace("SymAdaptedU", "U").replace("SymAdapted", "")
    enuc = float(mol.energy_nuc())
    provenance = {
        "producer": f"integrity {__version__} build",
        "pyscf_version": _pyscf_version(),
        "geometry": geometry_text(atoms),
        "unit": unit,
        "basis": basis,
        "charge": int(charge),
        "two_s": int(two_s),
        "scf": scf_name,
        "active_space": f"{n_active_electrons},{norb}" if active else "all orbitals",
        "frozen_core_orbitals": int(ncore),
        "date": date or history.today(),
    }
    if irreps is not None:
        provenance["irrep_names"] = " ".join(_irrep_names(mol))
    formula = _formula([mol.atom_pure_symbol(i) for i in range(mol.natm)])
    return Hamiltonian(
        orbitals=Orbitals(
            count=norb,
            basis=basis_kind,
            point_group=mol.groupname if irreps is not None else None,
            irreps=irreps,
            canonical=True,
        ),
        electrons=Electrons(n_alpha, n_beta),
        core_energy=float(ecore),
        core_energy_parts={"nuclear_repulsion": enuc, "frozen_core": float(ecore) - enuc},
        one_electron=h1,
        two_electron=TwoElectron(eri, notation="chemist", storage="dense"),
        references=tuple(references),
        title=title or f"{formula} {basis} {scf_name}" + (f" CAS({n_active_electrons},{norb})" if active else ""),
        provenance=provenance,
    )


def _formula(symbols) -> str:
    """Element symbols in order of first appearance with counts: O H H -> OH2."""
    counts = {}
    for symbol in symbols:
        counts[symbol] = counts.get(symbol, 0) + 1
    return "".join(s + (str(c) if c > 1 else "") for s, c in counts.items())


def _pyscf_version() -> str:
    import pyscf

    return pyscf.__version__


def _molecule(gto, geometry, basis, unit, charge, two_s, symmetry):
    def make(subgroup=None):
        extra = {"symmetry_subgroup": subgroup} if subgroup else {}
        return gto.M(
            atom=geometry, basis=basis, unit=unit, charge=charge, spin=two_s, symmetry=symmetry, verbose=0, **extra
        )

    try:
        mol = make()
        if symmetry and mol.groupname in ABELIAN_SUBGROUP:
            mol = make(ABELIAN_SUBGROUP[mol.groupname])
    except Exception as err:  # pyscf raises RuntimeError, KeyError, ValueError, AssertionError, its own kinds
        text = " ".join(str(err).split())
        if "basis" in text.lower() and ("unknown" in text.lower() or "not found" in text.lower()):
            raise FieldError("basis_set", f"pyscf does not know the basis set {basis!r} for these atoms") from None
        raise FieldError("molecule", f"pyscf could not build it: {type(err).__name__}: {text}") from None
    if symmetry and mol.groupname not in POINT_GROUP_ORDER:
        raise UnsupportedError(
            "point_group", f"pyscf reports point group {mol.groupname!r}, which has no abelian subgroup here"
        )
    return mol


def _scf(mol, two_s, unrestricted):
    from pyscf import scf

    mf = scf.UHF(mol) if unrestricted else (scf.RHF(mol) if two_s == 0 else scf.ROHF(mol))
    scratch = getattr(mf, "_chkfile", None)
    if scratch is not None:  # no checkpoint file: nothing reads it, and an open one outlives the build
        scratch.close()
    mf.chkfile = None
    mf.conv_tol = 1e-11
    mf.max_cycle = 200
    mf.kernel()
    if not mf.converged:
        mf = mf.newton()
        mf.kernel()
    if not mf.converged:
        raise UnsupportedError("scf", f"{type(mf).__name__} did not converge; try another geometry or basis")
    return mf


def _active_space(mol, mf, active):
    nmo = mf.mo_coeff[0].shape[1] if np.ndim(mf.mo_coeff) == 3 else mf.mo_coeff.shape[1]
    total = mol.nelectron
    if active is None:
        return total, 0, nmo
    n_electrons, norb = active
    if n_electrons > total or (total - n_electrons) % 2:
        raise FieldError(
            "active",
            f"{n_electrons} active electrons leave {total - n_electrons} of {total} "
            "for the frozen core, which needs an even, non-negative number",
        )
    ncore = (total - n_electrons) // 2
    if ncore + norb > nmo:
        raise FieldError("active", f"{ncore} frozen and {norb} active orbitals exceed the {nmo} molecular orbitals")
    if (n_electrons - mol.spin) % 2 or n_electrons < mol.spin:
        raise FieldError("active", f"{n_electrons} active electrons cannot have 2S = {mol.spin}")
    return n_electrons, ncore, norb


def _integrals(mf, ncore, norb, nelec, unrestricted):
    """(h1, eri, ecore) of the active space, chemist notation, dense."""
    from pyscf import ao2mo, mcscf

    if unrestricted:
        cas = mcscf.UCASCI(mf, norb, nelec, ncore=ncore)
        (h1a, h1b), ecore = cas.get_h1eff()
        aa, ab, bb = cas.get_h2eff()
        eri = np.stack([ao2mo.restore(1, block, norb) for block in (aa, ab, bb)])
        return np.stack([h1a, h1b]), eri, ecore
    cas = mcscf.CASCI(mf, norb, nelec, ncore=ncore)
    h1, ecore = cas.get_h1eff()
    eri = ao2mo.restore(1, cas.get_h2eff(), norb)
    return np.ascontiguousarray(h1), np.ascontiguousarray(eri), ecore


def _orbsym(mol, mo_coeff):
    from pyscf import symm

    return np.asarray(symm.label_orb_symm(mol, mol.irrep_id, mol.symm_orb, mo_coeff))


def _active_irreps(mol, mf, ncore, norb, unrestricted):
    if not mol.symmetry:
        return None
    window = slice(ncore, ncore + norb)
    if unrestricted:
        alpha = _orbsym(mol, mf.mo_coeff[0])[window]
        beta = _orbsym(mol, mf.mo_coeff[1])[window]
        if not np.array_equal(alpha, beta):
            return None  # one irreps list cannot describe both spins
        labels = alpha
    else:
        labels = _orbsym(mol, mf.mo_coeff)[window]
    return tuple(int(i) for i in labels)


def _irrep_names(mol):
    from pyscf import symm

    return [symm.irrep_id2name(mol.groupname, i) for i in range(POINT_GROUP_ORDER[mol.groupname])]


def _hf_reference(mf, ncore, norb, unrestricted) -> Reference:
    occ = np.asarray(mf.mo_occ)
    window = slice(ncore, ncore + norb)
    if unrestricted:
        alpha = np.flatnonzero(occ[0][window] > 0.5)
        beta = np.flatnonzero(occ[1][window] > 0.5)
    else:
        alpha = np.flatnonzero(occ[window] > 0.5)
        beta = np.flatnonzero(occ[window] > 1.5)
    return Reference(
        label="hf",
        method="hf",
        energy=float(mf.e_tot),
        occupation=(tuple(int(i) for i in alpha), tuple(int(i) for i in beta)),
    )


def _fci_reference(h1, eri, ecore, norb, nelec, two_s, irreps, unrestricted) -> Reference:
    """pyscf's full CI: the lowest state of the SCF's 2S (restricted), with its irrep."""
    from pyscf import fci

    if unrestricted:
        solver = fci.direct_uhf.FCISolver()
        solver.conv_tol = 1e-12
        energy, _ = solver.kernel(h1, eri, norb, nelec, ecore=ecore)
        return Reference(label="fci", method="fci", energy=float(energy), root=0)
    best = None
    for irrep in sorted(set(_reachable_irreps(irreps))) if irreps is not None else [None]:
        solver = fci.direct_spin1_symm.FCI() if irrep is not None else fci.direct_spin1.FCI()
        solver.conv_tol = 1e-12
        kwargs = {"orbsym": np.asarray(irreps), "wfnsym": irrep} if irrep is not None else {}
        solver = fci.addons.fix_spin_(solver, ss=(two_s / 2) * (two_s / 2 + 1), shift=0.5)
        try:
            energy, vector = solver.kernel(h1, eri, norb, nelec, ecore=ecore, **kwargs)
        except (RuntimeError, ValueError, IndexError):
            continue  # no determinant of this irrep
        spin_square, _ = fci.spin_op.spin_square0(vector, norb, nelec)
        if abs(spin_square - (two_s / 2) * (two_s / 2 + 1)) > 1e-6:
            continue  # no state of this 2S in this irrep: the energy would carry the penalty
        if best is None or energy < best[0] - 1e-9:
            best = (float(energy), irrep)
    if best is None:
        raise UnsupportedError("fci", f"pyscf found no state with 2S = {two_s}")
    return Reference(label="fci", method="fci", energy=best[0], two_s=int(two_s), irrep=best[1], root=0)


def _reachable_irreps(irreps):
    """Irreps a determinant can have: XORs of subsets of the orbital irreps."""
    reachable = {0}
    for irrep in irreps:
        reachable |= {r ^ irrep for r in reachable}
    return reachable
