"""Find orbitals' order and signs that map one Hamiltonian onto another.

A relabelling (π, s) of A gives B when, for every block and within the tolerance ε,

    h^B_pq = s_p s_q h^A_π(p)π(q),     g^B_pqrs = s_p s_q s_r s_s g^A_π(p)π(q)π(r)π(s).

How it is found:

1. **Sign-free invariants.** A sign flip cancels in every element in which each
   orbital index appears an even number of times, so h_pp, g_pppp (per
   orbital) and |h_pq|, J_pq = g_ppqq, K_pq = g_pqqp, L_pq = g_pqpq (per pair)
   are the same for A and B up to π. The true π therefore satisfies
   |x^B - x^A_π| <= ε for every one of them: these are necessary conditions,
   never a guess. Orbital p of B may take orbital q of A only when they have
   the same class (and irrep, when both files state irreps), equal diagonal
   invariants and equal sorted rows of each pair invariant (sorting moves
   no entry further than ε, so the test keeps the true q).
2. **Search.** A depth-first search assigns the orbital with the fewest
   candidates first, trying q = p first, then ascending. Each assignment
   p -> q removes from every other orbital p' the candidates q' whose pair
   invariants with q differ from those of p' with p by more than ε. Orbitals
   the invariants cannot tell apart (degenerate orbitals, symmetric models)
   leave several branches; every branch is followed until one passes step 4 or
   the search is exhausted, so ties are resolved by search, not by luck.
3. **Signs.** For a complete π, each pair (p, q) gets the weight
   w_pq = max |A element| over the elements whose sign is s_p s_q alone
   (h_pq, and two-electron elements with p and q once and one orbital r twice,
   in any of the 12 placements), and the sign of B/A at that element. A
   maximum spanning tree of these weights (only weights above ε) fixes every
   sign relative to the root of its component, the lowest-numbered orbital,
   which gets +1. Components the tree cannot join are joined, when some
   element ties their signs, by solving those sign equations over GF(2).
4. **Verification.** The candidate (π, s) is applied to every block of A and
   accepted only when the largest difference from B is within ε.

Flipping every sign at once changes nothing, so s is determined at best up to
that; the reported s has s_0 = +1 (and +1 on the root of each component the
elements leave free).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import breadth_first_order, connected_components, minimum_spanning_tree

from integrity.compare.views import OrbitalView, largest_deviation, relabelled

DEFAULT_NODE_LIMIT = 20_000
DEFAULT_LEAF_LIMIT = 500
MAX_FREE_COMPONENTS = 30


@dataclass(frozen=True)
class Found:
    """B's global orbital p is A's orbital ``permutation[p]`` times ``signs[p]``; ``largest`` is the
    largest element difference after the relabelling."""

    permutation: np.ndarray
    signs: np.ndarray
    largest: float


@dataclass(frozen=True)
class Search:
    """What a search found (None when nothing passed), and how far it went.

    ``exhausted`` is True when every branch allowed by the invariants was
    tried, so ``found is None`` proves that no relabelling exists within the
    tolerance; False when the search stopped at its limit first.
    """

    found: Found | None
    nodes: int
    leaves: int
    exhausted: bool
    used_irreps: bool


class _Stop(Exception):
    """The node or leaf limit was reached."""


# ---------------------------------------------------------------- invariants


def _diagonal_invariants(view: OrbitalView) -> np.ndarray:
    """(N, 2): h_pp and g_pppp of each global orbital."""
    out = np.zeros((view.size, 2), dtype=complex)
    offsets = view.offsets
    for block in view.one:
        x = block.sets[0]
        out[offsets[x] : offsets[x] + view.sizes[x], 0] = np.diagonal(block.array)
    for block in view.two:
        if len(set(block.sets)) == 1:
            x = block.sets[0]
            out[offsets[x] : offsets[x] + view.sizes[x], 1] = np.einsum("pppp->p", block.array)
    return out


def _pair_invariants(view: OrbitalView) -> np.ndarray:
    """(4, N, N): |h_pq|, J_pq = g_ppqq, K_pq = g_pqqp, L_pq = g_pqpq over global orbitals."""
    size = view.size
    out = np.zeros((4, size, size), dtype=complex)
    offsets = view.offsets

    def put(channel, first_set, second_set, values):
        rows = slice(offsets[first_set], offsets[first_set] + values.shape[0])
        cols = slice(offsets[second_set], offsets[second_set] + values.shape[1])
        out[channel, rows, cols] = values

    for block in view.one:
        put(0, block.sets[0], block.sets[1], np.abs(block.array))
    for block in view.two:
        a, b, c, d = block.sets
        g = block.array
        if a == b and c == d:
            put(1, a, c, np.einsum("ppqq->pq", g))
            if a != c:
                put(1, c, a, np.einsum("ppqq->qp", g))
        if a == d and b == c:
            put(2, a, b, np.einsum("pqqp->pq", g))
        if a == c and b == d:
            put(3, a, b, np.einsum("pqpq->pq", g))
    return out


def _close(first: np.ndarray, second: np.ndarray, tolerance: float, chunk: int = 64) -> np.ndarray:
    """(len(first), len(second)): whether rows agree elementwise within ``tolerance``."""
    out = np.empty((len(first), len(second)), dtype=bool)
    for start in range(0, len(first), chunk):
        part = first[start : start + chunk]
        with np.errstate(invalid="ignore"):
            out[start : start + chunk] = np.all(np.abs(part[:, None, :] - second[None, :, :]) <= tolerance, axis=-1)
    return out


def _candidates(a: OrbitalView, b: OrbitalView, pairs_a, pairs_b, tolerance: float, use_irreps: bool) -> np.ndarray:
    """dom[p, q]: B's orbital p may take A's orbital q (the necessary conditions of step 1)."""
    domain = b.classes[:, None] == a.classes[None, :]
    if use_irreps:
        domain &= b.irreps[:, None] == a.irreps[None, :]
    diag_a, diag_b = _diagonal_invariants(a), _diagonal_invariants(b)
    with np.errstate(invalid="ignore"):
        domain &= np.all(np.abs(diag_b[:, None, :] - diag_a[None, :, :]) <= tolerance, axis=-1)
    for channel in range(pairs_a.shape[0]):
        for matrix_a, matrix_b in ((pairs_a[channel], pairs_b[channel]), (pairs_a[channel].T, pairs_b[channel].T)):
            for cls in np.unique(a.classes):
                columns_a, columns_b = a.classes == cls, b.classes == cls
                for part in (np.real, np.imag):
                    sorted_a = np.sort(part(matrix_a[:, columns_a]), axis=1)
                    sorted_b = np.sort(part(matrix_b[:, columns_b]), axis=1)
                    if sorted_a.shape[1] != sorted_b.shape[1]:
                        return np.zeros_like(domain)
                    domain &= _close(sorted_b, sorted_a, tolerance)
    return domain


# ---------------------------------------------------------------- signs


def _placements():
    """(subscripts, slot of p, slot of q, slots of r) for the 12 placements of p, q once and r twice."""
    out = []
    for i, j in itertools.permutations(range(4), 2):
        rest = [k for k in range(4) if k not in (i, j)]
        letters = ["r"] * 4
        letters[i], letters[j] = "p", "q"
        out.append(("".join(letters) + "->pqr", i, j, tuple(rest)))
    return out


PLACEMENTS = _placements()


def _pair_signs(moved: OrbitalView, b: OrbitalView):
    """(weights, signs): for each pair the largest |A| element carrying s_p s_q alone, and B/A's sign there."""
    size = b.size
    weight = np.zeros((size, size))
    sign = np.ones((size, size), dtype=int)
    offsets = b.offsets

    def update(first_set, second_set, w, s):
        rows = slice(offsets[first_set], offsets[first_set] + w.shape[0])
        cols = slice(offsets[second_set], offsets[second_set] + w.shape[1])
        better = w > weight[rows, cols]
        weight[rows, cols] = np.where(better, w, weight[rows, cols])
        sign[rows, cols] = np.where(better, s, sign[rows, cols])

    def sign_of(value_b, value_a):
        return np.where(np.real(value_b * np.conj(value_a)) >= 0, 1, -1)

    for block_a, block_b in zip(moved.one, b.one, strict=True):
        update(block_a.sets[0], block_a.sets[1], np.abs(block_a.array), sign_of(block_b.array, block_a.array))
    for block_a, block_b in zip(moved.two, b.two, strict=True):
        sets = block_a.sets
        for subscripts, i, j, rest in PLACEMENTS:
            if sets[rest[0]] != sets[rest[1]]:
                continue
            witness_a = np.einsum(subscripts, block_a.array)
            witness_b = np.einsum(subscripts, block_b.array)
            best = np.argmax(np.abs(witness_a), axis=2)[:, :, None]
            value_a = np.take_along_axis(witness_a, best, axis=2)[:, :, 0]
            value_b = np.take_along_axis(witness_b, best, axis=2)[:, :, 0]
            update(sets[i], sets[j], np.abs(value_a), sign_of(value_b, value_a))
    np.fill_diagonal(weight, 0.0)
    transposed_better = weight.T > weight
    sign = np.where(transposed_better, sign.T, sign)
    weight = np.maximum(weight, weight.T)
    return weight, sign


def _tree_signs(weight: np.ndarray, pair_sign: np.ndarray, tolerance: float):
    """(signs, component labels) from a maximum spanning tree of the pair weights above ``tolerance``."""
    size = len(weight)
    with np.errstate(invalid="ignore"):
        strong = np.where(np.isfinite(weight) & (weight > tolerance), weight, 0.0)
    rows, cols = np.nonzero(np.triu(strong, 1))
    # Kruskal on 1/w: the minimum spanning tree of 1/w is a maximum spanning tree of w
    graph = csr_matrix((1.0 / strong[rows, cols], (rows, cols)), shape=(size, size))
    tree = minimum_spanning_tree(graph)
    tree = tree + tree.T
    count, labels = connected_components(tree, directed=False)
    signs = np.zeros(size, dtype=int)
    for root in range(size):
        if signs[root]:
            continue
        order, parents = breadth_first_order(tree, root, directed=False, return_predecessors=True)
        signs[root] = 1
        for node in order[1:]:
            signs[node] = signs[parents[node]] * pair_sign[parents[node], node]
    return signs, labels, count


def _component_flips(moved: OrbitalView, b: OrbitalView, signs, labels, count, tolerance):
    """Signs with whole components flipped as the elements tying them demand (GF(2)), or None."""
    if count < 2 or count > MAX_FREE_COMPONENTS:
        return None
    bits = np.left_shift(np.int64(1), labels.astype(np.int64))
    signed = relabelled(moved, np.arange(b.size), signs)
    equations: set[tuple[int, int]] = set()
    for block_a, block_b in zip(signed.blocks, b.blocks, strict=True):
        masks = np.zeros(block_a.array.shape, dtype=np.int64)
        for axis, s in enumerate(block_a.sets):
            local = b.split(bits)[s]
            shape = [1] * block_a.array.ndim
            shape[axis] = len(local)
            masks = masks ^ local.reshape(shape)
        value_a, value_b = block_a.array, block_b.array
        with np.errstate(invalid="ignore"):
            significant = (np.abs(value_a) > tolerance) & (masks != 0)
            same = np.abs(value_b - value_a) <= tolerance
            opposite = np.abs(value_b + value_a) <= tolerance
        if np.any(significant & ~same & ~opposite):
            return None  # no sign pattern fixes this element
        chosen = significant & ~same
        for mask in np.unique(masks[chosen]):
            equations.add((int(mask), 1))
        for mask in np.unique(masks[significant & same]):
            equations.add((int(mask), 0))
    flips = _solve_gf2(equations)
    if flips is None:
        return None
    flipped = (np.right_shift(np.int64(flips), labels.astype(np.int64)) & 1).astype(bool)
    return np.where(flipped, -signs, signs)


def _solve_gf2(equations) -> int | None:
    """A solution f (bits) of parity(mask & f) = rhs for every (mask, rhs), free bits 0; None if none."""
    pivots: dict[int, tuple[int, int]] = {}
    for mask, rhs in sorted(equations):
        while mask:
            top = mask.bit_length() - 1
            if top not in pivots:
                pivots[top] = (mask, rhs)
                break
            mask ^= pivots[top][0]
            rhs ^= pivots[top][1]
        if not mask and rhs:
            return None
    solution = 0
    for top in sorted(pivots):
        mask, rhs = pivots[top]
        lower = mask & ~(1 << top) & solution
        if rhs ^ (bin(lower).count("1") & 1):
            solution |= 1 << top
    return solution


def _signs_for(a: OrbitalView, b: OrbitalView, permutation: np.ndarray, tolerance: float) -> Found | None:
    """Step 3 and 4 for one complete permutation."""
    moved = relabelled(a, permutation)
    weight, pair_sign = _pair_signs(moved, b)
    signs, labels, count = _tree_signs(weight, pair_sign, tolerance)
    largest = largest_deviation(relabelled(moved, np.arange(b.size), signs), b)
    if not largest <= tolerance:
        fixed = _component_flips(moved, b, signs, labels, count, tolerance)
        if fixed is None:
            return None
        signs = fixed
        largest = largest_deviation(relabelled(moved, np.arange(b.size), signs), b)
        if not largest <= tolerance:
            return None
    if signs[0] < 0:
        signs = -signs  # flipping every sign changes nothing; report s_0 = +1
    return Found(np.asarray(permutation, dtype=int), signs, float(largest))


# ---------------------------------------------------------------- search


def find_relabelling(
    a: OrbitalView,
    b: OrbitalView,
    tolerance: float,
    *,
    node_limit: int = DEFAULT_NODE_LIMIT,
    leaf_limit: int = DEFAULT_LEAF_LIMIT,
) -> Search:
    """Search for (π, s) mapping ``a`` onto ``b`` (see the module docstring).

    When both views carry irreps the search first keeps each orbital's irrep;
    if that finds nothing it searches again without them (``used_irreps``
    says which search succeeded).
    """
    if a.sizes != b.sizes:
        return Search(None, 0, 0, True, False)
    pairs_a, pairs_b = _pair_invariants(a), _pair_invariants(b)
    passes = [True, False] if a.irreps is not None and b.irreps is not None else [False]
    nodes = leaves = 0
    exhausted = True
    for use_irreps in passes:
        domain = _candidates(a, b, pairs_a, pairs_b, tolerance, use_irreps)
        state = {"nodes": 0, "leaves": 0}
        try:
            found = _depth_first(a, b, domain, pairs_a, pairs_b, tolerance, state, node_limit, leaf_limit)
            complete = True
        except _Stop:
            found, complete = None, False
        nodes += state["nodes"]
        leaves += state["leaves"]
        exhausted = exhausted and complete
        if found is not None:
            return Search(found, nodes, leaves, True, use_irreps)
    return Search(None, nodes, leaves, exhausted, False)


def _depth_first(a, b, domain, pairs_a, pairs_b, tolerance, state, node_limit, leaf_limit):
    size = b.size
    assignment = np.full(size, -1, dtype=int)

    def compatible(p, q):
        """ok[p', q']: pair invariants of (p', p) in B agree with those of (q', q) in A."""
        with np.errstate(invalid="ignore"):
            rows = np.abs(pairs_b[:, p, :, None] - pairs_a[:, q, None, :]) <= tolerance
            cols = np.abs(pairs_b[:, :, p, None] - pairs_a[:, None, :, q]) <= tolerance
        return np.all(rows, axis=0) & np.all(cols, axis=0)

    def descend(current: np.ndarray):
        open_rows = np.flatnonzero(assignment < 0)
        if len(open_rows) == 0:
            if state["leaves"] >= leaf_limit:
                raise _Stop
            state["leaves"] += 1
            return _signs_for(a, b, assignment.copy(), tolerance)
        counts = current[open_rows].sum(axis=1)
        p = int(open_rows[np.argmin(counts)])
        choices = np.flatnonzero(current[p])
        if current[p, p]:
            choices = np.concatenate([[p], choices[choices != p]])
        for q in choices:
            if state["nodes"] >= node_limit:
                raise _Stop
            state["nodes"] += 1
            narrowed = current & compatible(p, int(q))
            narrowed[:, q] = False
            narrowed[p] = False
            narrowed[p, q] = True
            assigned = np.flatnonzero(assignment >= 0)
            if not np.all(narrowed[assigned, assignment[assigned]]):
                continue
            if not np.all(narrowed.any(axis=1)):
                continue
            assignment[p] = q
            found = descend(narrowed)
            if found is not None:
                return found
            assignment[p] = -1
        return None

    if not np.all(domain.any(axis=1)):
        return None
    return descend(domain.copy())
