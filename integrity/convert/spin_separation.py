"""Out of spin orbitals: spin-orbital -> unrestricted or restricted, and unrestricted -> restricted.

A spin-orbital Hamiltonian is unrestricted exactly when, with spin orbital
``P(p, s)`` (s = 0 alpha, 1 beta) and chemist two-electron integrals:

* ``h_so[P(p,s), P(q,t)] = 0`` for s != t (no alpha-beta coupling);
* ``(P(p,s1) P(q,s2) | P(r,s3) P(u,s4)) = 0`` unless s1 == s2 and s3 == s4, i.e. only
  the (aa|aa), (aa|bb), (bb|aa), (bb|bb) spin blocks are nonzero;
* ``(pa qa|rb ub) = (rb ub|pa qa)``: the (aa|bb) block is the (bb|aa) block transposed.

Then h = [h_aa, h_bb] and the two-electron array is [aa, ab, bb] =
[(aa|aa), (aa|bb), (bb|bb)]. It is restricted when also h_aa = h_bb and
(aa|aa) = (bb|bb) = (aa|bb). Each rule is measured as the largest offending
element; beyond the tolerance the step is refused naming its value and
spin-orbital indices, and an allowed (or within-tolerance) step records the
largest value dropped. This inverts :mod:`integrity.convert.spin_orbital`
bit for bit, since both only copy values.

>>> import numpy as np
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> h = np.diag([-1.0, -1.0]); h[0, 1] = h[1, 0] = 0.25      # couples 0 alpha with 0 beta
>>> ham = Hamiltonian(Orbitals(2, "spin-orbital", spin_layout="interleaved"), Electrons(1, 0),
...                   0.0, h, TwoElectron(np.zeros((2, 2, 2, 2)), notation="chemist"))
>>> from_spin_orbital_step(ham, "unrestricted")
Traceback (most recent call last):
...
integrity.errors.RefusedError: one_electron: spin-orbital -> unrestricted needs no alpha-beta \
coupling in the one-electron part, but one_electron[0, 1] = 0.25 couples spin orbital 0 \
(spatial 0 alpha) with spin orbital 1 (spatial 0 beta); the limit is 1e-10; allow the loss \
(--allow-loss) to drop it
"""

from __future__ import annotations

import dataclasses
import itertools
from dataclasses import dataclass

import numpy as np

from integrity.convert.bitwise import native
from integrity.convert.history import step_entry
from integrity.convert.metadata import SPIN_NAMES, map_references, occupation_from_spin_orbitals, spatial_irreps
from integrity.convert.reindex import NOTATION_SWAP, spin_split
from integrity.convert.storage import require_tolerance
from integrity.errors import FieldError, RefusedError
from integrity.model.hamiltonian import Hamiltonian, TwoElectron
from integrity.model.indexing import spin_orbital_index

RULES = {
    "coupling": "no alpha-beta coupling in the one-electron part",
    "mixed": "only the (aa|aa), (aa|bb), (bb|aa), (bb|bb) spin blocks to be nonzero",
    "transpose": "the (aa|bb) block to equal the (bb|aa) block transposed",
    "h_alpha_beta": "equal alpha and beta one-electron blocks (h_aa = h_bb)",
    "aa_bb": "equal same-spin blocks ((aa|aa) = (bb|bb))",
    "aa_ab": "equal same-spin and opposite-spin blocks ((aa|aa) = (aa|bb))",
}


@dataclass(frozen=True)
class Offense:
    """The largest element breaking one rule: its size, the field, and a sentence naming it."""

    rule: str
    magnitude: float
    field: str
    text: str


def _largest(array: np.ndarray) -> tuple[float, tuple[int, ...]]:
    magnitude = np.abs(array)
    flat = int(np.argmax(magnitude))
    index = np.unravel_index(flat, array.shape)
    return float(magnitude.flat[flat]), tuple(int(i) for i in index)


def _number(value) -> str:
    value = complex(value)
    return f"{value.real:.3g}" if value.imag == 0 else f"{value:.3g}"


class _SpinOrbitals:
    """Names of spin orbitals of one layout, for messages."""

    def __init__(self, n: int, layout: str):
        self.n, self.layout = n, layout

    def index(self, p: int, s: int) -> int:
        return int(spin_orbital_index(p, s, self.n, self.layout))

    def name(self, p: int, s: int) -> str:
        return f"spin orbital {self.index(p, s)} (spatial {p} {SPIN_NAMES[s]})"

    def chemist(self, spins, spatial) -> tuple[int, ...]:
        return tuple(self.index(p, s) for p, s in zip(spatial, spins, strict=True))


def _integral_text(names: _SpinOrbitals, spins, spatial, value, notation: str) -> str:
    P, Q, R, S = names.chemist(spins, spatial)
    labels = " ".join(f"{p}{'ab'[s]}" for p, s in zip(spatial, spins, strict=True))
    stored = f"two_electron[{P}, {R}, {Q}, {S}]" if notation == "physicist" else f"two_electron[{P}, {Q}, {R}, {S}]"
    return f"({P} {Q}|{R} {S}) = {_number(value)} (spatial and spin {labels}; stored at {stored})"


def spin_orbital_offenses(ham: Hamiltonian, basis: str) -> list[Offense]:
    """The largest offender of each rule a spin-orbital file must obey to become ``basis``."""
    n = ham.n // 2
    layout = ham.orbitals.spin_layout
    notation = ham.two_electron.notation
    names = _SpinOrbitals(n, layout)
    h = spin_split(native(ham.one_electron), n, layout)
    chem = spin_split(native(ham.two_electron.array), n, layout)
    if notation == "physicist":
        chem = chem.transpose(NOTATION_SWAP)
    found = []
    for s, t in ((0, 1), (1, 0)):
        size, (p, q) = _largest(h[s, :, t, :])
        found.append(
            Offense(
                "coupling",
                size,
                "one_electron",
                f"one_electron[{names.index(p, s)}, {names.index(q, t)}] = "
                f"{_number(h[s, p, t, q])} couples {names.name(p, s)} with {names.name(q, t)}",
            )
        )
    for spins in itertools.product((0, 1), repeat=4):
        if spins[0] == spins[1] and spins[2] == spins[3]:
            continue
        block = chem[spins[0], :, spins[1], :, spins[2], :, spins[3], :]
        size, where = _largest(block)
        found.append(
            Offense(
                "mixed",
                size,
                "two_electron",
                _integral_text(names, spins, where, block[where], notation),
            )
        )
    ab = chem[0, :, 0, :, 1, :, 1, :]
    ba_t = chem[1, :, 1, :, 0, :, 0, :].transpose(2, 3, 0, 1)
    size, (p, q, r, u) = _largest(ab - ba_t)
    found.append(
        Offense(
            "transpose",
            size,
            "two_electron",
            _integral_text(names, (0, 0, 1, 1), (p, q, r, u), ab[p, q, r, u], notation)
            + " but "
            + _integral_text(names, (1, 1, 0, 0), (r, u, p, q), ba_t[p, q, r, u], notation),
        )
    )
    if basis == "restricted":
        found += _restricted_offenses(
            h[0, :, 0, :],
            h[1, :, 1, :],
            chem[0, :, 0, :, 0, :, 0, :],
            chem[0, :, 0, :, 1, :, 1, :],
            chem[1, :, 1, :, 1, :, 1, :],
            lambda which, index: _spin_orbital_name(names, which, index, notation),
        )
    return found


def _spin_orbital_name(names: _SpinOrbitals, which: str, index, notation: str) -> str:
    spins = {
        "h_a": (0, 0),
        "h_b": (1, 1),
        "aa": (0, 0, 0, 0),
        "ab": (0, 0, 1, 1),
        "bb": (1, 1, 1, 1),
    }[which]
    if which.startswith("h"):
        return f"one_electron[{names.index(index[0], spins[0])}, {names.index(index[1], spins[1])}]"
    P, Q, R, S = names.chemist(spins, index)
    return f"({P} {Q}|{R} {S})"


def _restricted_offenses(h_a, h_b, aa, ab, bb, name) -> list[Offense]:
    found = []
    for rule, field, (left, right), (left_name, right_name) in (
        ("h_alpha_beta", "one_electron", (h_a, h_b), ("h_a", "h_b")),
        ("aa_bb", "two_electron", (aa, bb), ("aa", "bb")),
        ("aa_ab", "two_electron", (aa, ab), ("aa", "ab")),
    ):
        size, where = _largest(left - right)
        found.append(
            Offense(
                rule,
                size,
                field,
                f"{name(left_name, where)} = {_number(left[where])} but "
                f"{name(right_name, where)} = {_number(right[where])}",
            )
        )
    return found


def unrestricted_offenses(ham: Hamiltonian) -> list[Offense]:
    """The largest offender of each rule an unrestricted file must obey to become restricted."""
    h = native(ham.one_electron)
    two = native(ham.two_electron.array)
    chem = two if ham.two_electron.notation == "chemist" else np.swapaxes(two, -3, -2)

    def name(which, index):
        if which.startswith("h"):
            return f"one_electron[{0 if which == 'h_a' else 1}, {index[0]}, {index[1]}]"
        return f"{which} ({index[0]} {index[1]}|{index[2]} {index[3]})"

    return _restricted_offenses(h[0], h[1], chem[0], chem[1], chem[2], name)


def _judge(offenses, source: str, target: str, allow_loss: bool, tolerance: float) -> dict:
    """Refuse the worst offense beyond the tolerance (unless the loss is allowed); return history fields."""
    worst = max(offenses, key=lambda o: o.magnitude)
    if worst.magnitude > tolerance and not allow_loss:
        raise RefusedError(
            worst.field,
            f"{source} -> {target} needs {RULES[worst.rule]}, but {worst.text}; the limit is "
            f"{tolerance:g}; allow the loss (--allow-loss) to drop it",
        )
    if worst.magnitude == 0:
        return {}
    return {
        "dropped_max_deviation": worst.magnitude,
        "dropped_rule": RULES[worst.rule],
        "tolerance": tolerance,
        "forced": worst.magnitude > tolerance,
    }


def _refuse_antisymmetrized(ham: Hamiltonian, target: str) -> None:
    if ham.two_electron.antisymmetrized:
        raise RefusedError(
            "two_electron.antisymmetrized",
            f"cannot convert an antisymmetrized file to the {target} basis: the plain integrals "
            "<pq|rs> cannot be recovered from <pq||rs> = <pq|rs> - <pq|sr>",
        )


def from_spin_orbital_step(ham: Hamiltonian, basis: str, *, allow_loss: bool = False, tolerance: float = 1e-10):
    """Spin-orbital (dense, plain) -> ``basis`` ("unrestricted" or "restricted"); (ham, entries).

    The result keeps the input's notation. Irreps of alpha and beta spin
    orbitals of one spatial orbital must agree (when the loss is allowed, irreps are dropped);
    reference occupations are mapped to spatial indices.
    """
    if basis not in ("restricted", "unrestricted"):
        raise FieldError("basis", f"expected 'restricted' or 'unrestricted', got {basis!r}")
    tolerance = require_tolerance(tolerance)
    _refuse_antisymmetrized(ham, basis)
    extra = _judge(spin_orbital_offenses(ham, basis), "spin-orbital", basis, allow_loss, tolerance)
    n = ham.n // 2
    layout = ham.orbitals.spin_layout
    two = ham.two_electron
    h = spin_split(native(ham.one_electron), n, layout)
    split = spin_split(native(two.array), n, layout)
    if two.notation == "physicist":
        split = split.transpose(NOTATION_SWAP)
    blocks = [
        split[0, :, 0, :, 0, :, 0, :],
        split[0, :, 0, :, 1, :, 1, :],
        split[1, :, 1, :, 1, :, 1, :],
    ]
    if two.notation == "physicist":
        blocks = [np.swapaxes(block, -3, -2) for block in blocks]  # phys_ab[p,q,r,s] = chem_ab[p,r,q,s]
    if basis == "restricted":
        one, eri = np.ascontiguousarray(h[0, :, 0, :]), np.ascontiguousarray(blocks[0])
    else:
        one, eri = np.stack([h[0, :, 0, :], h[1, :, 1, :]]), np.stack(blocks)
    irreps = ham.orbitals.irreps
    try:
        irreps = spatial_irreps(irreps, layout)
    except RefusedError as err:
        if not allow_loss:
            raise RefusedError(err.field, err.reason + "; allow the loss (--allow-loss) to drop the irreps") from None
        irreps, extra = None, {**extra, "dropped_irreps": True}
    orb = ham.orbitals
    references = map_references(
        ham.references, lambda occ, label: occupation_from_spin_orbitals(occ, ham.n, layout, label)
    )
    result = ham.replace(
        orbitals=dataclasses.replace(orb, count=n, basis=basis, spin_layout=None, irreps=irreps),
        one_electron=one,
        two_electron=TwoElectron(
            eri,
            notation=two.notation,
            storage="dense",
            interaction=two.interaction,
            antisymmetrized=two.antisymmetrized,
        ),
        references=references,
    )
    entry = step_entry("basis", "spin-orbital", basis, fingerprint_changed=True, spin_layout=layout, **extra)
    return result, [entry]


def to_restricted_step(ham: Hamiltonian, *, allow_loss: bool = False, tolerance: float = 1e-10):
    """Unrestricted (dense) -> restricted when h_a = h_b and aa = ab = bb; (ham, entries)."""
    tolerance = require_tolerance(tolerance)
    extra = _judge(unrestricted_offenses(ham), "unrestricted", "restricted", allow_loss, tolerance)
    two = ham.two_electron
    result = ham.replace(
        orbitals=dataclasses.replace(ham.orbitals, basis="restricted"),
        one_electron=np.array(native(ham.one_electron)[0]),
        two_electron=TwoElectron(
            np.array(native(two.array)[0]),
            notation=two.notation,
            storage="dense",
            interaction=two.interaction,
            antisymmetrized=two.antisymmetrized,
        ),
    )
    return result, [step_entry("basis", "unrestricted", "restricted", fingerprint_changed=True, **extra)]
