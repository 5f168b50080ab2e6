"""Abelian point-group labels (D2h and subgroups) of strings and determinants.

Irreps are integers 0–7 whose product is the bitwise XOR. A string's irrep is
the XOR of the irreps of its occupied orbitals; a determinant's the XOR of its
alpha and beta strings' (or of its occupied spin orbitals'). Spin orbitals
take the irrep of their spatial orbital.

>>> string_irreps(np.array([0b011, 0b110]), [1, 2, 3]).tolist()
[3, 1]
"""

from __future__ import annotations

import numpy as np

from integrity.errors import FieldError
from integrity.solver.integrals import alpha_index, beta_index

__all__ = ["dominant_irrep", "require_irreps", "spin_orbital_irreps", "string_irreps"]


def require_irreps(irreps, n: int, irrep=None) -> np.ndarray | None:
    """Validate a list of ``n`` orbital irreps (0–7) and a target irrep; None passes.

    >>> require_irreps([0, 3], 2).tolist()
    [0, 3]
    """
    if irreps is None:
        if irrep is not None:
            raise FieldError("irrep", f"a target irrep ({irrep}) needs orbital irreps, got none")
        return None
    labels = np.asarray(irreps)
    if labels.shape != (n,) or labels.dtype.kind not in "iu":
        raise FieldError("irreps", f"expected {n} integers, got {labels.dtype} shape {labels.shape}")
    if labels.size and (labels.min() < 0 or labels.max() > 7):
        raise FieldError("irreps", f"irreps must lie in 0..7, got {labels.min()}..{labels.max()}")
    if irrep is not None and not (isinstance(irrep, (int, np.integer)) and 0 <= irrep <= 7):
        raise FieldError("irrep", f"target irrep must be an integer in 0..7, got {irrep!r}")
    return labels.astype(np.int64)


def string_irreps(strs, irreps) -> np.ndarray:
    """XOR of ``irreps[p]`` over the occupied orbitals of each string."""
    strs = np.asarray(strs, dtype=np.int64)
    out = np.zeros(strs.shape, dtype=np.int64)
    for p, label in enumerate(np.asarray(irreps, dtype=np.int64)):
        out ^= ((strs >> p) & 1) * label
    return out


def spin_orbital_irreps(irreps, layout: str) -> np.ndarray:
    """Irrep of every spin orbital from the spatial orbital irreps.

    >>> spin_orbital_irreps([1, 2], "interleaved").tolist()
    [1, 1, 2, 2]
    """
    irreps = np.asarray(irreps, dtype=np.int64)
    n = len(irreps)
    out = np.zeros(2 * n, dtype=np.int64)
    out[alpha_index(n, layout)] = irreps
    out[beta_index(n, layout)] = irreps
    return out


def dominant_irrep(weights_by_irrep: np.ndarray, purity: float = 1e-6):
    """The irrep holding all but ``purity`` of the weight, else None.

    >>> dominant_irrep(np.array([0.0, 1.0, 0, 0, 0, 0, 0, 0])), dominant_irrep(np.full(8, 0.125))
    (1, None)
    """
    total = float(np.sum(weights_by_irrep))
    best = int(np.argmax(weights_by_irrep))
    if total > 0 and weights_by_irrep[best] >= (1.0 - purity) * total:
        return best
    return None
