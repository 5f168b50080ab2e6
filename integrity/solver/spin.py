"""Total spin ``<S^2>`` of CI vectors, through ladder tables.

``S^2 = S_- S_+ + S_z^2 + S_z`` with ``S_+ = sum_i a†_{i alpha} a_{i beta}``, so for
vectors ``x, y`` of one space::

    <x|S^2|y> = <S_+ x | S_+ y> + <x|(S_z^2 + S_z)|y>

Two-string vectors ``c[Ia, Ib]`` (restricted orbitals, determinant
``A†(Ia) B†(Ib)|0>``): ``S_+`` moves one electron from a beta to the alpha
orbital of the same spatial function, with sign
``(-1)**n_alpha * sign(a_i on Ib) * sign(a†_i on Ia)``. Spin-orbital vectors
assume that the alpha and beta spin orbitals of one spatial index share one
spatial function (the only case where ``S^2`` is defined from the file).

The spin quantum number follows from ``<S^2> = S(S+1)``:
``2S = round(sqrt(1 + 4 <S^2>) - 1)``.

>>> two_s_of(0.0), two_s_of(0.75), two_s_of(2.0000001), two_s_of(6.0)
(0, 1, 2, 4)
"""

from __future__ import annotations

import math

import numpy as np

from integrity.solver.integrals import alpha_index, beta_index
from integrity.solver.irrep_blocks import string_groups
from integrity.solver.strings import popcount, strings
from integrity.solver.tables import annihilation_table, creation_table

__all__ = [
    "raise_two_string",
    "spin_orbital_raising",
    "spin_square_matrix_blocked",
    "spin_square_matrix_spin_orbital",
    "spin_square_matrix_two_string",
    "two_s_of",
]


def two_s_of(s_squared: float) -> int:
    """``round(sqrt(1 + 4 <S^2>) - 1)``: twice the spin quantum number."""
    return round(math.sqrt(max(0.0, 1.0 + 4.0 * float(s_squared))) - 1.0)


def raise_two_string(c: np.ndarray, n: int, n_alpha: int, n_beta: int) -> np.ndarray:
    """``S_+ c`` as a matrix over ``strings(n, n_alpha + 1) x strings(n, n_beta - 1)``.

    >>> c = np.zeros((2, 2)); c[0, 1] = 1.0        # alpha in orbital 0, beta in 1
    >>> raise_two_string(c, 2, 1, 1).tolist()       # S+ gives the alpha pair (0, 1)
    [[1.0]]
    """
    if n_alpha >= n or n_beta == 0:
        return np.zeros((0, 0), dtype=c.dtype)
    up = creation_table(n, n_alpha)
    down = annihilation_table(n, n_beta)
    out = np.zeros((len(strings(n, n_alpha + 1)), len(strings(n, n_beta - 1))), dtype=c.dtype)
    parity = -1.0 if n_alpha % 2 else 1.0
    for i in range(n):
        rows = np.flatnonzero(up.index[:, i] >= 0)
        cols = np.flatnonzero(down.index[:, i] >= 0)
        if len(rows) == 0 or len(cols) == 0:
            continue
        sign = parity * np.outer(up.sign[rows, i], down.sign[cols, i])
        out[np.ix_(up.index[rows, i], down.index[cols, i])] += sign * c[np.ix_(rows, cols)]
    return out


def spin_square_matrix_two_string(vectors, n: int, n_alpha: int, n_beta: int) -> np.ndarray:
    """``M[i, j] = <x_i|S^2|x_j>`` for two-string vectors ``x_i`` of shape (na, nb).

    >>> singlet = np.array([[0.0, 1.0], [1.0, 0.0]]) / np.sqrt(2)   # c.T == c
    >>> triplet = np.array([[0.0, 1.0], [-1.0, 0.0]]) / np.sqrt(2)  # c.T == -c
    >>> np.round(spin_square_matrix_two_string([singlet, triplet], 2, 1, 1), 12).tolist()
    [[0.0, 0.0], [0.0, 2.0]]
    """
    vectors = [np.asarray(v) for v in vectors]
    sz = 0.5 * (n_alpha - n_beta)
    raised = [raise_two_string(v, n, n_alpha, n_beta).ravel() for v in vectors]
    flat = np.array([v.ravel() for v in vectors])
    up = np.array(raised).reshape(len(vectors), -1)
    return up.conj() @ up.T + (sz * sz + sz) * (flat.conj() @ flat.T)


def _raise_blocked(flat: np.ndarray, layout, up, down, up_groups, down_groups) -> np.ndarray:
    """``S_+`` of a blocked vector (:mod:`irrep_blocks`), as the stored blocks of the raised space.

    ``a†_i(alpha) a_i(beta)`` takes block ``(Ga, Gb)`` to ``(Ga ^ Γ(i), Gb ^ Γ(i))``, so
    the raised vector keeps the target irrep; its blocks are keyed by alpha irrep.
    """
    labels = layout.orbital_irreps
    parity = -1.0 if layout.n_alpha % 2 else 1.0
    raised = {}
    for block, c in zip(layout.blocks, layout.views(flat), strict=True):
        ga, gb = block.alpha_irrep, block.beta_irrep
        rows_all, cols_all = layout.alpha.members(ga), layout.beta.members(gb)
        for i, gamma in enumerate(labels):
            rows = np.flatnonzero(up.index[rows_all, i] >= 0)
            cols = np.flatnonzero(down.index[cols_all, i] >= 0)
            if len(rows) == 0 or len(cols) == 0:
                continue
            key = int(ga ^ gamma)
            if key not in raised:
                shape = (up_groups.size(key), down_groups.size(int(gb ^ gamma)))
                raised[key] = np.zeros(shape, dtype=flat.dtype)
            sign = parity * np.outer(up.sign[rows_all[rows], i], down.sign[cols_all[cols], i])
            target_rows = up_groups.local[up.index[rows_all[rows], i]]
            target_cols = down_groups.local[down.index[cols_all[cols], i]]
            raised[key][np.ix_(target_rows, target_cols)] += sign * c[np.ix_(rows, cols)]
    parts = [raised[key].ravel() for key in sorted(raised)]
    return np.concatenate(parts) if parts else np.zeros(0, dtype=flat.dtype)


def spin_square_matrix_blocked(vectors, layout) -> np.ndarray:
    """``M[i, j] = <x_i|S^2|x_j>`` for flat blocked vectors of one layout (restricted orbitals).

    >>> from integrity.solver.irrep_blocks import block_layout
    >>> layout = block_layout(2, 1, 1, [0, 1], 1)
    >>> [b.alpha_irrep for b in layout.blocks]        # c[0, 1] and c[1, 0]
    [0, 1]
    >>> x = np.array([[1.0, 1.0], [1.0, -1.0]]) / np.sqrt(2)   # singlet, triplet (M_S = 0)
    >>> np.round(spin_square_matrix_blocked(x, layout), 12).tolist()
    [[0.0, 0.0], [0.0, 2.0]]
    """
    vectors = [np.asarray(v) for v in vectors]
    n = len(layout.orbital_irreps)
    n_alpha, n_beta = layout.n_alpha, layout.n_beta
    sz = 0.5 * (n_alpha - n_beta)
    flat = np.array(vectors).reshape(len(vectors), -1)
    weight = (sz * sz + sz) * (flat.conj() @ flat.T)
    if n_alpha >= n or n_beta == 0:
        return weight
    up_groups = string_groups(n, n_alpha + 1, layout.orbital_irreps)
    down_groups = string_groups(n, n_beta - 1, layout.orbital_irreps)
    up, down = creation_table(n, n_alpha), annihilation_table(n, n_beta)
    raised = np.array([_raise_blocked(v, layout, up, down, up_groups, down_groups) for v in vectors])
    return raised.conj() @ raised.T + weight


def spin_orbital_raising(determinants: np.ndarray, m: int, layout: str):
    """Sparse map of ``S_+`` on strings of ``m`` spin orbitals.

    Returns ``(source, result, sign, n_results)``: ``S_+ x`` has component
    ``sum sign * x[source]`` at result index ``result`` (``n_results`` distinct
    result strings), for ``x`` over the sorted ``determinants``.

    >>> src, res, sign, count = spin_orbital_raising(np.array([0b10]), 2, "interleaved")
    >>> src.tolist(), res.tolist(), sign.tolist(), count
    ([0], [0], [1], 1)
    """
    determinants = np.asarray(determinants, dtype=np.int64)
    n = m // 2
    sources, results, signs = [], [], []
    one = np.int64(1)
    for up_orb, down_orb in zip(alpha_index(n, layout), beta_index(n, layout), strict=True):
        up_bit, down_bit = one << up_orb, one << down_orb
        idx = np.flatnonzero(((determinants & down_bit) != 0) & ((determinants & up_bit) == 0))
        det = determinants[idx]
        after_down = det ^ down_bit
        sign = (1 - 2 * (popcount(det & (down_bit - 1)) & 1)) * (1 - 2 * (popcount(after_down & (up_bit - 1)) & 1))
        sources.append(idx)
        results.append(after_down | up_bit)
        signs.append(sign)
    if not sources:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, empty, 0
    unique, inverse = np.unique(np.concatenate(results), return_inverse=True)
    return (
        np.concatenate(sources).astype(np.int64),
        inverse.astype(np.int64),
        np.concatenate(signs).astype(np.int64),
        len(unique),
    )


def spin_square_matrix_spin_orbital(vectors, determinants: np.ndarray, m: int, layout: str, raising=None) -> np.ndarray:
    """``M[i, j] = <x_i|S^2|x_j>`` for row vectors over spin-orbital ``determinants``.

    ``raising`` may hold a precomputed :func:`spin_orbital_raising`.

    >>> dets = np.array([0b0110, 0b1001])        # interleaved: (b0 a1) and (a0 b1)
    >>> x = np.array([[1.0, 1.0]]) / np.sqrt(2)
    >>> float(np.round(spin_square_matrix_spin_orbital(x, dets, 4, "interleaved")[0, 0], 12))
    2.0
    """
    vectors = np.atleast_2d(np.asarray(vectors))
    determinants = np.asarray(determinants, dtype=np.int64)
    source, result, sign, count = raising if raising is not None else spin_orbital_raising(determinants, m, layout)
    alpha_mask = int(sum(1 << int(a) for a in alpha_index(m // 2, layout)))
    n_up = popcount(determinants & np.int64(alpha_mask))
    sz = 0.5 * (2 * n_up - popcount(determinants))
    raised = np.zeros((len(vectors), count), dtype=np.result_type(vectors, np.float64))
    for i, x in enumerate(vectors):
        values = sign * x[source]
        raised[i].real = np.bincount(result, weights=values.real, minlength=count)
        if np.iscomplexobj(raised):
            raised[i].imag = np.bincount(result, weights=values.imag, minlength=count)
    weight = sz * sz + sz
    return raised.conj() @ raised.T + (vectors.conj() * weight) @ vectors.T
