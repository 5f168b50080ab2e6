"""Integral arrays: validation, spin-orbital expansion, spin-block structure.

Conventions (energies in hartree, 0-based indices, C order):

* restricted: ``h1[p, q]``, ``eri[p, q, r, s] = (pq|rs)`` chemist notation and
  ``H = ecore + sum h_pq E_pq + 1/2 sum (pq|rs) (E_pq E_rs - delta_qr E_ps)``.
* unrestricted: ``h1 = [h_alpha, h_beta]``, ``eri = [aa, ab, bb]`` with
  ``eri[1, p, q, r, s] = (p_alpha q_alpha | r_beta s_beta)``.
* spin-orbital: ``m`` spin orbitals, ``eri[p, q, r, s] = (pq|rs)`` plain (not
  antisymmetrized), ``H = ecore + sum h_pq a†p aq + 1/2 sum (pq|rs) a†p a†r as aq``.
  Layout "interleaved": spin orbital ``2i`` is alpha, ``2i + 1`` beta of spatial
  ``i``; "blocked": ``i`` alpha and ``n + i`` beta.

>>> alpha_index(2, "interleaved").tolist(), beta_index(2, "blocked").tolist()
([0, 2], [2, 3])
"""

from __future__ import annotations

import numpy as np

from integrity.errors import FieldError

__all__ = [
    "BASES",
    "LAYOUTS",
    "alpha_index",
    "beta_index",
    "pair_symmetric",
    "require_arrays",
    "spin_blocks",
    "spin_labels",
    "spin_orbital_integrals",
    "sz_coupling",
]

BASES = ("restricted", "unrestricted", "spin-orbital")
LAYOUTS = ("interleaved", "blocked")

HERMITIAN_TOLERANCE = 1e-10
"""Largest accepted deviation from the required symmetries, relative to max(1, max|value|)."""


def alpha_index(n_spatial: int, layout: str) -> np.ndarray:
    """Spin-orbital index of the alpha spin orbital of each spatial orbital."""
    _require_layout(layout)
    i = np.arange(n_spatial, dtype=np.int64)
    return 2 * i if layout == "interleaved" else i


def beta_index(n_spatial: int, layout: str) -> np.ndarray:
    """Spin-orbital index of the beta spin orbital of each spatial orbital."""
    _require_layout(layout)
    i = np.arange(n_spatial, dtype=np.int64)
    return 2 * i + 1 if layout == "interleaved" else n_spatial + i


def spin_labels(m: int, layout: str) -> np.ndarray:
    """``0`` for alpha and ``1`` for beta spin orbitals, in the given layout.

    >>> spin_labels(4, "interleaved").tolist(), spin_labels(4, "blocked").tolist()
    ([0, 1, 0, 1], [0, 0, 1, 1])
    """
    labels = np.zeros(m, dtype=np.int64)
    labels[beta_index(m // 2, layout)] = 1
    return labels


def _require_layout(layout) -> None:
    if layout not in LAYOUTS:
        raise FieldError("spin_layout", f"expected one of {LAYOUTS}, got {layout!r}")


def _deviation(a: np.ndarray, b: np.ndarray) -> float:
    return float(np.max(np.abs(a - b))) if a.size else 0.0


def _require_symmetry(field: str, what: str, a, b, scale: float) -> None:
    deviation = _deviation(a, b)
    if deviation > HERMITIAN_TOLERANCE * scale:
        raise FieldError(
            field, f"{what} must hold for a Hermitian Hamiltonian; largest deviation found {deviation:.3e}"
        )


def require_arrays(basis: str, h1, eri) -> tuple[np.ndarray, np.ndarray, int]:
    """Validate shapes, dtypes, finiteness and Hermiticity; return ``(h1, eri, n)``.

    ``n`` is the number of spatial orbitals (restricted, unrestricted) or of spin
    orbitals (spin-orbital). Arrays come back as float64 or complex128.

    >>> h, g, n = require_arrays("restricted", np.eye(2), np.zeros((2, 2, 2, 2)))
    >>> n, h.dtype.name
    (2, 'float64')
    """
    if basis not in BASES:
        raise FieldError("basis", f"expected one of {BASES}, got {basis!r}")
    h1 = np.asarray(h1)
    eri = np.asarray(eri)
    for field, arr in (("one_electron", h1), ("two_electron", eri)):
        if arr.dtype.kind not in "fciu":
            raise FieldError(field, f"expected real or complex numbers, got dtype {arr.dtype}")
    dtype = np.complex128 if np.iscomplexobj(h1) or np.iscomplexobj(eri) else np.float64
    h1 = np.ascontiguousarray(h1, dtype=dtype)
    eri = np.ascontiguousarray(eri, dtype=dtype)
    lead = () if basis != "unrestricted" else (2,)
    if h1.ndim != len(lead) + 2 or h1.shape[-1] != h1.shape[-2] or h1.shape[:-2] != lead:
        raise FieldError("one_electron", f"basis {basis!r} needs shape {(*lead, 'n', 'n')}, got {h1.shape}")
    n = h1.shape[-1]
    want = (3, n, n, n, n) if basis == "unrestricted" else (n, n, n, n)
    if eri.shape != want:
        raise FieldError("two_electron", f"basis {basis!r} with n = {n} needs shape {want}, got {eri.shape}")
    if basis == "spin-orbital" and n % 2:
        raise FieldError("one_electron", f"spin-orbital count must be even, got {n}")
    for field, arr in (("one_electron", h1), ("two_electron", eri)):
        if not np.all(np.isfinite(arr)):
            raise FieldError(field, "holds NaN or infinite values")
    scale = max(1.0, float(np.max(np.abs(eri), initial=0.0)), float(np.max(np.abs(h1), initial=0.0)))
    blocks_h = h1 if basis == "unrestricted" else h1[None]
    for h in blocks_h:
        _require_symmetry("one_electron", "h[p, q] = conj(h[q, p])", h, h.conj().T, scale)
    blocks_g = eri if basis == "unrestricted" else eri[None]
    for index, g in enumerate(blocks_g):
        _require_symmetry("two_electron", "(pq|rs) = conj((qp|sr))", g, g.transpose(1, 0, 3, 2).conj(), scale)
        if basis != "unrestricted" or index != 1:
            _require_symmetry("two_electron", "(pq|rs) = (rs|pq)", g, g.transpose(2, 3, 0, 1), scale)
    return h1, eri, n


def pair_symmetric(eri: np.ndarray) -> bool:
    """True when a real ``eri`` is symmetric under ``p <-> q`` and ``r <-> s`` exactly enough.

    That is the condition for packing pairs ``(p >= q)``.

    >>> pair_symmetric(np.ones((2, 2, 2, 2)))
    True
    """
    if np.iscomplexobj(eri):
        return False
    scale = max(1.0, float(np.max(np.abs(eri), initial=0.0)))
    tol = 1e-12 * scale
    return _deviation(eri, eri.transpose(1, 0, 2, 3)) <= tol and _deviation(eri, eri.transpose(0, 1, 3, 2)) <= tol


def spin_orbital_integrals(basis: str, h1, eri, layout: str = "blocked"):
    """Expand restricted or unrestricted arrays to spin-orbital ``(h, eri)``.

    ``h[a(p), a(q)] = h_alpha[p, q]``, ``eri[a(p), a(q), b(r), b(s)] = (pq|rs)_ab`` and
    ``eri[b(p), b(q), a(r), a(s)] = (rs|pq)_ab`` with ``a, b`` = :func:`alpha_index`,
    :func:`beta_index`; spin-forbidden elements are zero. Spin-orbital input is
    returned unchanged.

    >>> h, g = spin_orbital_integrals("restricted", np.eye(1), np.full((1, 1, 1, 1), 2.0))
    >>> h.tolist(), g[0, 0, 1, 1], g[0, 1, 0, 1]
    ([[1.0, 0.0], [0.0, 1.0]], np.float64(2.0), np.float64(0.0))
    """
    h1 = np.asarray(h1)
    eri = np.asarray(eri)
    if basis == "spin-orbital":
        return h1, eri
    if basis == "restricted":
        ha = hb = h1
        gaa = gab = gbb = eri
    elif basis == "unrestricted":
        ha, hb = h1
        gaa, gab, gbb = eri
    else:
        raise FieldError("basis", f"expected one of {BASES}, got {basis!r}")
    n = ha.shape[0]
    a, b = alpha_index(n, layout), beta_index(n, layout)
    dtype = np.result_type(h1, eri)
    h = np.zeros((2 * n, 2 * n), dtype=dtype)
    g = np.zeros((2 * n,) * 4, dtype=dtype)
    h[np.ix_(a, a)] = ha
    h[np.ix_(b, b)] = hb
    g[np.ix_(a, a, a, a)] = gaa
    g[np.ix_(a, a, b, b)] = gab
    g[np.ix_(b, b, a, a)] = np.transpose(gab, (2, 3, 0, 1))
    g[np.ix_(b, b, b, b)] = gbb
    return h, g


def sz_coupling(h, eri, layout: str) -> float:
    """Largest element that changes S_z: ``h[p, q]`` or ``(pq|rs)`` with net spin flip.

    An element of ``(pq|rs)`` changes ``S_z`` by ``(sigma_p - sigma_q + sigma_r - sigma_s)/2``;
    zero for every nonzero element means the Hamiltonian conserves S_z.

    >>> h, g = spin_orbital_integrals("restricted", np.eye(2), np.ones((2, 2, 2, 2)))
    >>> sz_coupling(h, g, "blocked")
    0.0
    """
    m = h.shape[0]
    spin = spin_labels(m, layout)
    dh = spin[:, None] - spin[None, :]
    dg = dh[:, :, None, None] + dh[None, None, :, :]
    coupling = max(float(np.max(np.abs(h[dh != 0]), initial=0.0)), float(np.max(np.abs(eri[dg != 0]), initial=0.0)))
    return coupling


def spin_blocks(h, eri, layout: str):
    """Split a spin-orbital Hamiltonian into unrestricted blocks, or explain why not.

    Returns ``(blocks, reason)``: ``blocks = (h_a, h_b, eri_aa, eri_ab, eri_bb)`` when
    every nonzero element pairs orbitals of equal spin (``h[p, q]`` with
    ``sigma_p = sigma_q``, ``(pq|rs)`` with ``sigma_p = sigma_q`` and ``sigma_r = sigma_s``),
    else ``None`` and a sentence naming the offending element class.

    >>> h, g = spin_orbital_integrals("restricted", np.eye(1), np.ones((1, 1, 1, 1)))
    >>> blocks, reason = spin_blocks(h, g, "interleaved")
    >>> [b.shape for b in blocks], reason
    ([(1, 1), (1, 1), (1, 1, 1, 1), (1, 1, 1, 1), (1, 1, 1, 1)], None)
    """
    m = h.shape[0]
    n = m // 2
    spin = spin_labels(m, layout)
    mixed = spin[:, None] != spin[None, :]
    if np.any(h[mixed] != 0):
        return None, "the one-electron array couples alpha and beta spin orbitals"
    pair_mixed = mixed[:, :, None, None] | mixed[None, None, :, :]
    if np.any(eri[pair_mixed] != 0):
        return None, ("the two-electron array has elements (pq|rs) with p, q (or r, s) of different spin")
    a, b = alpha_index(n, layout), beta_index(n, layout)
    eri_ab = eri[np.ix_(a, a, b, b)]
    scale = max(1.0, float(np.max(np.abs(eri), initial=0.0)))
    if _deviation(eri[np.ix_(b, b, a, a)], np.transpose(eri_ab, (2, 3, 0, 1))) > HERMITIAN_TOLERANCE * scale:
        return None, ("the (beta beta|alpha alpha) block is not the transpose of (alpha alpha|beta beta)")
    blocks = (h[np.ix_(a, a)], h[np.ix_(b, b)], eri[np.ix_(a, a, a, a)], eri_ab, eri[np.ix_(b, b, b, b)])
    return blocks, None
