"""Nuclear repulsion of a geometry, to compare with the constant a file carries.

For point nuclei of charges Z_A at positions R_A (bohr), in hartree::

    E_nuc = sum_{A < B} Z_A Z_B / |R_A - R_B|

(the nuclear term of the Born-Oppenheimer Hamiltonian; Source: Szabo and Ostlund,
*Modern Quantum Chemistry*, sec. 2.1.2 (from memory)). Coordinates in
angstrom are divided by ``BOHR_ANGSTROM``, the value pyscf uses
(``pyscf.lib.param.BOHR``, CODATA 2010): a file built with pyscf then agrees
to rounding; against CODATA 2018 (0.529177210903 Å) the relative difference
is 2e-10.

A geometry comes from ``provenance.geometry`` (atom lines ``SYMBOL X Y Z``)
in ``provenance.unit`` (``angstrom``, the default, or ``bohr``), as
``integrity build`` writes them.

>>> round(nuclear_repulsion([("H", (0.0, 0.0, 0.0)), ("H", (0.0, 0.0, 1.4))], "bohr"), 12)
0.714285714286
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from integrity.errors import FieldError

#: Å per bohr, as pyscf defines it (CODATA 2010)
BOHR_ANGSTROM = 0.52917721092
UNITS = ("angstrom", "bohr")

#: element symbols in order of atomic number (Z = index + 1), IUPAC names up to oganesson
ELEMENTS = (
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se Br Kr "
    "Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb "
    "Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf "
    "Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og"
).split()


def atomic_number(symbol: str) -> int:
    """Z of an element symbol (any capitalisation).

    >>> atomic_number("ne"), atomic_number("Og")
    (10, 118)
    """
    name = symbol.strip().capitalize()
    if name not in ELEMENTS:
        raise FieldError("geometry", f"{symbol!r} is not an element symbol")
    return ELEMENTS.index(name) + 1


def nuclear_repulsion(atoms, unit: str = "angstrom") -> float:
    """E_nuc in hartree of ``atoms`` = [(symbol, (x, y, z)), ...] in ``unit``; two nuclei at one place are refused."""
    if unit not in UNITS:
        raise FieldError("unit", f"{unit!r} is not a unit; expected one of {UNITS}")
    scale = 1.0 / BOHR_ANGSTROM if unit == "angstrom" else 1.0
    nuclei = [(atomic_number(symbol), tuple(float(x) * scale for x in xyz)) for symbol, xyz in atoms]
    total = 0.0
    for a, (z_a, r_a) in enumerate(nuclei):
        for b in range(a):
            z_b, r_b = nuclei[b]
            distance = math.dist(r_a, r_b)
            if distance == 0.0:
                raise FieldError("geometry", f"atoms {b + 1} and {a + 1} are at the same place")
            total += z_a * z_b / distance
    return total


def provenance_geometry(provenance: Mapping | None):
    """(atoms, unit) from ``provenance.geometry`` and ``provenance.unit``; None when absent or unreadable."""
    if not isinstance(provenance, Mapping):
        return None
    text, unit = provenance.get("geometry"), provenance.get("unit", "angstrom")
    if not isinstance(text, str) or unit not in UNITS:
        return None
    atoms = []
    for line in text.splitlines():
        fields = line.split()
        if not fields:
            continue
        if len(fields) != 4:
            return None
        try:
            xyz = tuple(float(x) for x in fields[1:])
            atomic_number(fields[0])
        except (ValueError, FieldError):
            return None
        if not all(math.isfinite(x) for x in xyz):
            return None
        atoms.append((fields[0], xyz))
    return (atoms, unit) if atoms else None


def provenance_nuclear_repulsion(provenance: Mapping | None) -> float | None:
    """E_nuc of the geometry recorded in provenance, or None when there is none to read."""
    found = provenance_geometry(provenance)
    if found is None:
        return None
    try:
        return nuclear_repulsion(*found)
    except FieldError:
        return None
