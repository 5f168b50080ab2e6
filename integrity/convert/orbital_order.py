"""Relabel orbitals: a new order, new signs, and (optionally) alpha and beta exchanged.

With ``order`` π and ``signs`` s, orbital p of the result is orbital π(p) of
the input times s_p::

    h'[p, q]          = s_p s_q h[π(p), π(q)]
    g'[p, q, r, s]    = s_p s_q s_r s_s g[π(p), π(q), π(r), π(s)]

in any notation (all four indices are orbital indices). Unrestricted files
may take one order and sign list for both spins or one per spin; the ab block
then takes the alpha ones on its alpha indices and the beta ones on its beta
indices. ``exchange_spins`` first exchanges alpha and beta: the electron
counts (and those of references) swap, and so do the occupied lists; in an
unrestricted file also h^a <-> h^b, aa <-> bb, and ab'[p,q,r,s] = ab[r,s,p,q]
(chemist; physicist ab'[p,q,r,s] = ab[q,p,s,r]); in a spin-orbital file the
order itself must send every alpha spin orbital to a beta one and back.

Irreps and reference occupations follow the orbitals (an ``hf`` reference
without an occupation, meaning the lowest orbitals, gets the one it meant);
energies do not change.

>>> import numpy as np
>>> from integrity.model.hamiltonian import Hamiltonian, Orbitals, Electrons, TwoElectron
>>> h = np.array([[-1.0, 0.2], [0.2, -0.5]])
>>> ham = Hamiltonian(Orbitals(2, "restricted"), Electrons(1, 1), 0.0, h,
...                   TwoElectron(np.zeros((2, 2, 2, 2)), notation="chemist"))
>>> new, entries = relabel_step(ham, order=(1, 0), signs=(1, -1))
>>> new.one_electron.tolist(), entries[0]["to"], entries[0]["signs"]
([[-0.5, -0.2], [-0.2, -1.0]], '1,0', '+-')
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from integrity.convert.bitwise import native
from integrity.convert.history import step_entry
from integrity.energies.meanfield import reference_occupation
from integrity.errors import FieldError, RefusedError
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import Electrons, Hamiltonian, TwoElectron
from integrity.model.indexing import spin_of_spin_orbitals
from integrity.model.orbital_lists import format_orbital_list, format_signs

SPIN_NAMES = ("alpha", "beta")


def _per_spin(value, sets: int, n: int, field: str) -> list:
    """``value`` as one sequence per orbital set (restricted and spin-orbital: one; unrestricted: two)."""
    if value is None:
        return [None] * sets
    nested = len(value) > 0 and not np.isscalar(value[0])
    if nested and len(value) != 2:
        raise FieldError(field, f"expected one list, or two (alpha, beta), got {len(value)} lists")
    if nested and sets == 1:
        raise FieldError(
            field, "one list per spin applies to unrestricted files only; give a single list for this file"
        )
    return [list(v) for v in value] if nested else [list(value)] * sets


def _require_permutation(order: Sequence[int], n: int, field: str) -> np.ndarray:
    try:
        indices = np.asarray([int(i) for i in order], dtype=int)
    except (TypeError, ValueError):
        raise FieldError(field, f"expected orbital indices, got {list(order)!r}") from None
    if len(indices) == n and np.array_equal(np.sort(indices), np.arange(n)):
        return indices
    problems = []
    if len(indices) != n:
        problems.append(f"{len(indices)} indices for {n} orbitals")
    out_of_range = sorted({int(i) for i in indices if not 0 <= i < n})
    if out_of_range:
        problems.append(f"{format_orbital_list(out_of_range)} out of range 0..{n - 1}")
    counts = np.bincount(indices[(indices >= 0) & (indices < n)], minlength=n)
    if np.any(counts > 1):
        problems.append(f"{format_orbital_list(np.flatnonzero(counts > 1))} listed twice")
    if np.any(counts == 0):
        problems.append(f"{format_orbital_list(np.flatnonzero(counts == 0))} missing")
    raise FieldError(
        field, f"an orbital order lists each of the {n} orbitals once (--orbital-order): {'; '.join(problems)}"
    )


def _require_signs(signs, n: int, field: str) -> np.ndarray:
    values = np.asarray([int(s) for s in signs], dtype=int)
    if len(values) != n or not np.all(np.abs(values) == 1):
        raise FieldError(field, f"expected {n} signs, each +1 or -1 (--orbital-signs), got {list(signs)!r}")
    return values


def slot_sets(basis: str, notation: str, block: int) -> tuple[int, int, int, int]:
    """Which orbital set (0 alpha, 1 beta) each index of stored block ``block`` runs over."""
    if basis != "unrestricted":
        return (0, 0, 0, 0)
    if block == 0:
        return (0, 0, 0, 0)
    if block == 2:
        return (1, 1, 1, 1)
    return (0, 0, 1, 1) if notation == "chemist" else (0, 1, 0, 1)


def permuted(array: np.ndarray, orders, signs) -> np.ndarray:
    """``s_a s_b ... array[π_a(a), π_b(b), ...]``: one order and sign vector per axis."""
    out = np.ascontiguousarray(array[np.ix_(*orders)])  # a fresh array: the signs may go in place
    for axis, sign in enumerate(signs):
        if np.any(sign < 0):
            shape = [1] * array.ndim
            shape[axis] = len(sign)
            out *= sign.reshape(shape).astype(out.real.dtype)
    return out


def _exchanged_arrays(ham: Hamiltonian):
    """(h, g) of an unrestricted file with alpha and beta exchanged."""
    h = native(ham.one_electron)
    g = native(ham.two_electron.array)
    cross = (2, 3, 0, 1) if ham.two_electron.notation == "chemist" else (1, 0, 3, 2)
    return h[::-1].copy(), np.stack([g[2], g[1].transpose(cross), g[0]])


def _spin_orbital_check(ham: Hamiltonian, order: np.ndarray, exchange: bool) -> None:
    spins = spin_of_spin_orbitals(ham.n, ham.orbitals.spin_layout)
    wanted = 1 - spins if exchange else spins
    bad = np.flatnonzero(spins[order] != wanted)
    if len(bad):
        p = int(bad[0])
        reason = (
            "--exchange-spins needs every spin orbital to take one of the other spin"
            if exchange
            else "give --exchange-spins to exchange alpha and beta throughout"
        )
        raise RefusedError(
            "orbital_order",
            f"position {p} ({SPIN_NAMES[spins[p]]} in the {ham.orbitals.spin_layout} layout) would take spin "
            f"orbital {int(order[p])}, which is {SPIN_NAMES[spins[order[p]]]}; {reason}",
        )


def _irreps(ham: Hamiltonian, orders) -> tuple[int, ...] | None:
    irreps = ham.orbitals.irreps
    if irreps is None:
        return None
    new = [tuple(int(irreps[i]) for i in order) for order in orders]
    if len(new) == 2 and new[0] != new[1]:
        p = next(i for i in range(len(new[0])) if new[0][i] != new[1][i])
        raise RefusedError(
            "orbital_order",
            f"orbital {p} would take alpha orbital {int(orders[0][p])} (irrep {new[0][p]}) and beta orbital "
            f"{int(orders[1][p])} (irrep {new[1][p]}); an unrestricted file has one irrep per orbital",
        )
    return new[0]


def _occupation(occupation, exchange: bool, inverses):
    alpha, beta = occupation
    if exchange:
        alpha, beta = beta, alpha
    inverse_alpha, inverse_beta = inverses[0], inverses[-1]
    return (
        tuple(sorted(int(inverse_alpha[i]) for i in alpha)),
        tuple(sorted(int(inverse_beta[i]) for i in beta)),
    )


def _references(ham: Hamiltonian, exchange: bool, inverses):
    """References with occupations relabelled; an hf reference without one (the lowest orbitals) gets
    the occupation it meant, since the lowest orbitals after the relabelling are other orbitals."""
    out = []
    for ref in ham.references:
        changes = {}
        occupation = reference_occupation(ham, ref) if ref.method == "hf" else ref.occupation
        if occupation is not None:
            changes["occupation"] = _occupation(occupation, exchange, inverses)
        if exchange and ref.electrons is not None:
            changes["electrons"] = Electrons(ref.electrons.beta, ref.electrons.alpha)
        out.append(dataclasses.replace(ref, **changes) if changes else ref)
    return tuple(out)


def relabel_step(ham: Hamiltonian, order=None, signs=None, exchange_spins: bool = False):
    """Apply an orbital order, signs and a spin exchange to a dense Hamiltonian; (ham, entries).

    ``order`` and ``signs``: None (identity, all +), one sequence, or for an
    unrestricted file two (alpha, beta). The entry's ``to`` is the order as an
    orbital list (alpha/beta when they differ), with ``signs`` and ``exchange_spins``.
    """
    if order is None and signs is None and not exchange_spins:
        return ham, []
    if not isinstance(exchange_spins, bool):
        raise FieldError("exchange_spins", f"expected True or False, got {exchange_spins!r}")
    n = ham.n
    sets = 2 if ham.basis == "unrestricted" else 1
    orders = [
        np.arange(n) if o is None else _require_permutation(o, n, "orbital_order")
        for o in _per_spin(order, sets, n, "orbital_order")
    ]
    sign_lists = [
        np.ones(n, dtype=int) if s is None else _require_signs(s, n, "orbital_signs")
        for s in _per_spin(signs, sets, n, "orbital_signs")
    ]
    if ham.basis == "spin-orbital":
        _spin_orbital_check(ham, orders[0], exchange_spins)
    two = ham.two_electron
    if ham.basis == "unrestricted" and exchange_spins:
        h, g = _exchanged_arrays(ham)
    else:
        h, g = native(ham.one_electron), native(two.array)
    if ham.basis == "unrestricted":
        h = np.stack([permuted(h[b], [orders[b]] * 2, [sign_lists[b]] * 2) for b in range(2)])
        blocks = []
        for b in range(3):
            slots = slot_sets(ham.basis, two.notation, b)
            blocks.append(permuted(g[b], [orders[s] for s in slots], [sign_lists[s] for s in slots]))
        g = np.stack(blocks)
    else:
        h = permuted(h, [orders[0]] * 2, [sign_lists[0]] * 2)
        g = permuted(g, [orders[0]] * 4, [sign_lists[0]] * 4)
    inverses = [np.argsort(o) for o in orders]
    electrons = ham.electrons
    if exchange_spins:
        electrons = Electrons(electrons.beta, electrons.alpha)
    result = ham.replace(
        orbitals=dataclasses.replace(ham.orbitals, irreps=_irreps(ham, orders)),
        electrons=electrons,
        one_electron=h,
        two_electron=TwoElectron(g, two.notation, "dense", two.interaction, two.antisymmetrized),
        references=_references(ham, exchange_spins, inverses),
    )
    texts = [format_orbital_list(o) for o in orders]
    sign_texts = [format_signs(s) for s in sign_lists]
    entry = step_entry(
        "relabel",
        format_orbital_list(range(n)),
        texts[0] if len(set(texts)) == 1 else "/".join(texts),
        fingerprint_changed=fingerprint(result) != fingerprint(ham),
        signs=sign_texts[0] if len(set(sign_texts)) == 1 else "/".join(sign_texts),
        exchange_spins=exchange_spins,
    )
    return result, [entry]
