"""compare finds an orbital order and signs that map one Hamiltonian onto another, whenever one exists.

Each case relabels a Hamiltonian with a random order π and signs s by the plain formula
(tests/support/relabelling.py), compares, and applies the relabelling compare reports by the
same plain formula: it must reproduce the relabelled Hamiltonian. When orbitals are
degenerate (Hubbard rings, models symmetrized over a cyclic group, two identical
non-interacting copies) several relabellings exist; any one that maps A onto B is right.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import PROPERTY_SETTINGS, seeded
from hypothesis import given
from hypothesis import strategies as st
from relabelling import relabelled

from integrity.compare import compare
from integrity.compare.relabel import find_relabelling
from integrity.compare.views import view_of
from integrity.convert import convert
from integrity.model.hamiltonian import Electrons, Hamiltonian, Orbitals, TwoElectron
from integrity.testing import hubbard, random_hamiltonian, random_restricted

TOLERANCE = 1e-10


def _largest(first: Hamiltonian, second: Hamiltonian) -> float:
    return max(
        float(np.max(np.abs(np.asarray(first.one_electron) - np.asarray(second.one_electron)))),
        float(np.max(np.abs(np.asarray(first.two_electron.array) - np.asarray(second.two_electron.array)))),
    )


def _reported_applied(a: Hamiltonian, verdict) -> Hamiltonian:
    """A relabelled by what compare reported, through the plain formula."""
    found = verdict.relabelling
    beta = {}
    if len(found.order) == 2:
        beta = {"beta_order": found.order[1], "beta_signs": found.signs[1]}
    return relabelled(a, found.order[0], found.signs[0], exchange=found.exchange_spins, **beta)


def _model(h, g, alpha, beta, interaction=None) -> Hamiltonian:
    n = len(h)
    return Hamiltonian(
        Orbitals(n, "restricted"), Electrons(alpha, beta), 0.25, h, TwoElectron(g, "chemist", interaction=interaction)
    )


def _assert_recovers(a: Hamiltonian, b: Hamiltonian):
    verdict = compare(a, b, tolerance=TOLERANCE)
    assert verdict.name in ("identical", "tolerance", "relabel"), [s.evidence for s in verdict.steps]
    if verdict.name == "relabel":
        assert _largest(_reported_applied(a, verdict), b) <= TOLERANCE
        assert verdict.relabelling.largest <= TOLERANCE
    return verdict


orders = st.integers(2, 7).flatmap(
    lambda n: st.tuples(st.permutations(range(n)), st.lists(st.sampled_from([-1, 1]), min_size=n, max_size=n))
)


@PROPERTY_SETTINGS
@given(relabelling=orders, seed=st.integers(0, 2**31))
def test_a_random_restricted_hamiltonian_is_recovered_with_its_order_and_signs(relabelling, seed):
    order, signs = relabelling
    a = random_hamiltonian("restricted", len(order), seed=seed)
    verdict = _assert_recovers(a, relabelled(a, order, signs))
    if verdict.name == "relabel":  # no degeneracy: the order is unique, the signs up to one overall sign
        assert list(verdict.relabelling.order[0]) == list(order)
        assert list(verdict.relabelling.signs[0]) == list(np.multiply(signs, signs[0]))


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(
    relabelling=st.integers(2, 5).flatmap(
        lambda n: st.tuples(
            st.permutations(range(n)),
            st.permutations(range(n)),
            st.lists(st.sampled_from([-1, 1]), min_size=2 * n, max_size=2 * n),
        )
    ),
    exchange=st.booleans(),
    seed=st.integers(0, 2**31),
)
def test_an_unrestricted_hamiltonian_is_recovered_per_spin_and_across_an_exchange(relabelling, exchange, seed):
    alpha_order, beta_order, signs = relabelling
    n = len(alpha_order)
    a = random_hamiltonian("unrestricted", n, seed=seed, alpha=n // 2 + 1, beta=n // 2)
    b = relabelled(a, alpha_order, signs[:n], beta_order=beta_order, beta_signs=signs[n:], exchange=exchange)
    verdict = _assert_recovers(a, b)
    if verdict.name == "relabel":
        assert verdict.relabelling.exchange_spins == exchange
    assert (verdict.b.alpha, verdict.b.beta) == ((n // 2, n // 2 + 1) if exchange else (n // 2 + 1, n // 2))


@PROPERTY_SETTINGS
@given(sites=st.integers(3, 8), onsite=st.floats(0.5, 8.0), relabelling=st.data())
def test_a_hubbard_ring_whose_sites_all_look_alike_is_recovered(sites, onsite, relabelling):
    h, g = hubbard(sites, t=1.0, u=onsite, periodic=True)
    a = _model(h, g, sites // 2, sites - sites // 2, interaction="model")
    order = relabelling.draw(st.permutations(range(sites)))
    signs = relabelling.draw(st.lists(st.sampled_from([-1, 1]), min_size=sites, max_size=sites))
    _assert_recovers(a, relabelled(a, order, signs))


def _cyclic_symmetric(n: int, period: int, rng) -> tuple[np.ndarray, np.ndarray]:
    """Random (h, g) averaged over the cyclic shift of orbitals by ``n // period``: exact degeneracies."""
    h, g = random_restricted(n, rng)
    shift = np.roll(np.arange(n), n // period)
    h_sum, g_sum = np.zeros_like(h), np.zeros_like(g)
    index = np.arange(n)
    for _ in range(period):
        h_sum += h[np.ix_(index, index)]
        g_sum += g[np.ix_(index, index, index, index)]
        index = shift[index]
    return h_sum / period, g_sum / period


@PROPERTY_SETTINGS
@given(period=st.sampled_from([2, 3]), relabelling=st.data(), seed=st.integers(0, 2**31))
def test_a_model_symmetric_under_a_cyclic_group_is_recovered(period, relabelling, seed):
    n = 2 * period
    h, g = _cyclic_symmetric(n, period, np.random.default_rng(seed))
    a = _model(h, g, n // 2, n // 2)
    order = relabelling.draw(st.permutations(range(n)))
    signs = relabelling.draw(st.lists(st.sampled_from([-1, 1]), min_size=n, max_size=n))
    _assert_recovers(a, relabelled(a, order, signs))


def test_two_identical_non_interacting_copies_are_recovered_whatever_the_relative_signs():
    h1, g1 = random_restricted(3, seeded("copies"))
    h, g = np.zeros((6, 6)), np.zeros((6,) * 4)
    for block in (slice(0, 3), slice(3, 6)):
        h[block, block] = h1
        g[block, block, block, block] = g1
    a = _model(h, g, 3, 3)
    for order, signs in [((3, 4, 5, 0, 1, 2), (1, 1, 1, -1, -1, -1)), ((4, 1, 5, 0, 2, 3), (1, -1, 1, 1, -1, -1))]:
        _assert_recovers(a, relabelled(a, order, signs))


def test_signs_tied_only_by_four_distinct_orbitals_are_found_through_their_parity():
    """h diagonal, and no element with an orbital twice beside two others: the spanning tree has no
    edges, so only (01|23) and (02|13) fix s_0 s_1 s_2 s_3; the sign equations decide it."""
    h = np.diag([-1.0, -0.9, -0.8, -0.7])
    g = np.zeros((4,) * 4)
    for p in range(4):
        for q in range(4):
            g[p, p, q, q] = 0.5 + 0.01 * (p + q)
    for (p, q, r, s), value in (((0, 1, 2, 3), 0.1), ((0, 2, 1, 3), 0.07)):
        for index in {(p, q, r, s), (q, p, r, s), (p, q, s, r), (q, p, s, r)}:
            g[index] = g[index[2:] + index[:2]] = value
    a = _model(h, g, 2, 2)
    for signs in [(1, 1, 1, -1), (1, -1, -1, -1), (-1, 1, 1, 1)]:
        b = relabelled(a, (0, 1, 2, 3), signs)
        verdict = _assert_recovers(a, b)
        assert np.prod(verdict.relabelling.signs[0]) == np.prod(signs)


def test_a_spin_orbital_file_is_recovered_keeping_each_spin_orbital_s_spin():
    ham = random_hamiltonian("restricted", 3, seed=5, alpha=2, beta=1)
    so = convert(ham, basis="spin-orbital", spin_layout="interleaved").hamiltonian
    order, signs = (2, 5, 0, 3, 4, 1), (1, -1, -1, 1, 1, -1)  # even positions (alpha) take alpha spin orbitals
    verdict = _assert_recovers(so, relabelled(so, order, signs))
    assert verdict.relabelling.basis == "spin-orbital" and not verdict.relabelling.exchange_spins
    orbitals = np.asarray(verdict.relabelling.order[0])
    assert np.all(orbitals % 2 == np.arange(6) % 2)


def test_a_hamiltonian_that_is_no_relabelling_is_refused_after_an_exhausted_search():
    a = random_hamiltonian("restricted", 5, seed=11)
    changed = np.array(a.two_electron.array)
    changed[0, 0, 1, 1] = changed[1, 1, 0, 0] = changed[0, 0, 1, 1] + 1e-6
    b = relabelled(a.replace(two_electron=TwoElectron(changed, "chemist")), (1, 0, 2, 4, 3), (1, 1, -1, 1, 1))
    search = find_relabelling(view_of(a), view_of(b), TOLERANCE)
    assert search.found is None and search.exhausted


def _ring_with_a_hidden_change(sites: int):
    """A Hubbard ring, and a copy with (02|11) set: no invariant sees it, so every branch the
    ring's symmetry allows must be tried before the search can say no."""
    h, g = hubbard(sites, t=1.0, u=2.0, periodic=True)
    changed = np.array(g)
    for index in {(0, 2, 1, 1), (2, 0, 1, 1), (1, 1, 0, 2), (1, 1, 2, 0)}:
        changed[index] = 1e-3
    half = sites // 2
    return _model(h, g, half, half, interaction="model"), _model(h, changed, half, half, interaction="model")


def test_the_search_tries_every_symmetric_branch_before_it_says_no():
    a, b = _ring_with_a_hidden_change(8)
    search = find_relabelling(view_of(a), view_of(b), TOLERANCE)
    assert search.found is None and search.exhausted
    assert search.leaves >= 16  # the ring's 16 rotations and reflections all pass the invariants


def test_the_search_stops_at_its_limit_and_says_a_relabelling_may_still_exist():
    a, b = _ring_with_a_hidden_change(8)
    search = find_relabelling(view_of(a), view_of(b), TOLERANCE, node_limit=3)
    assert search.found is None and not search.exhausted and search.nodes <= 3
    a, b = _ring_with_a_hidden_change(4)
    verdict = compare(a, b, search_limit=2)
    relabel = next(step for step in verdict.steps if step.name == "relabel")
    assert verdict.name == "different" and "may still exist" in relabel.evidence


@pytest.mark.parametrize("use_irreps", [True, False])
def test_irreps_that_follow_the_orbitals_are_kept_and_irreps_that_do_not_are_noted(use_irreps):
    a = random_hamiltonian("restricted", 4, seed=3)
    a = a.replace(orbitals=Orbitals(4, "restricted", point_group="C2v", irreps=(0, 1, 0, 3)))
    b = relabelled(a, (2, 0, 3, 1), (1, -1, 1, 1))
    if not use_irreps:
        b = b.replace(orbitals=Orbitals(4, "restricted", point_group="C2v", irreps=(0, 0, 1, 3)))
    verdict = _assert_recovers(a, b)
    relabel = next(step for step in verdict.steps if step.name == "relabel")
    assert ("irreps do not follow" in relabel.evidence) is not use_irreps
