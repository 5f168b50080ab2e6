"""Sigma ``H c`` for two-string vectors of one irrep, block by block (:mod:`irrep_blocks`).

The operator is that of :mod:`sigma_two_string` (whose docstring has the
formulas and the gather scheme), confined to the determinants of the target
irrep ``G``: the result is exactly ``P H P c`` with ``P`` the projector on them,
for any integrals. Irreps multiply by XOR, a string's irrep is the XOR of its
orbitals' and a pair ``pq`` has irrep ``Γ(pq) = Γ(p) ^ Γ(q)``.

Same spin: ``<Ia|H_a|Ja>`` connects strings of one irrep inside ``P H P``, so
``sigma[Ga, Gb] = H_a[Ga] c[Ga, Gb] + c[Ga, Gb] H_b[Gb].T``.

Alpha-beta: between two determinants of irrep ``G`` only the terms
``(pq|rs) E^a_pq E^b_rs`` with ``Γ(pq) = Γ(rs) = Γ`` survive, and for the target
block ``(Ga, Gb)`` their source is the block ``(Ga ^ Γ, Gb ^ Γ)``. A beta string
``Ib`` is reached by only ``K`` of the pairs ``rs`` of irrep ``Γ`` (``K`` at most
``n_beta * (n - n_beta + 1)`` over all ``Γ``, against ``n (n + 1) / 2`` pairs), so
for each target beta string ``i`` and each ``Γ``::

    B[i, k, Ja] = <Ib_i|E^b_rs_k|Jb_k> c[Ja, Jb_k]              k < K (beta gather)
    G_Γ[i, pq, Ja] = sum_k (pq|rs_k) B[i, k, Ja]                 (a product per string)
    sigma[Ia, Ib_i] += sum_pq sum_Ja <Ia|E^a_pq|Ja> G_Γ(pq)[i, pq, Ja]  (alpha gather)

so the products cost ``sum_Γ npair_Γ K_Γ`` per determinant instead of
``npair**2`` (for N2 CAS(14,14) without irreps 105 x 56 instead of 105 x 105;
with D2h irreps about 1/8 of that again) and the vectors and scratch hold the
target blocks only. The ``G_Γ`` of one unit lie one after the other in one flat
buffer, so the alpha gather is one ``take`` through offsets computed once per
target block and width.

The work is cut into units (column ranges for ``H_a`` and the alpha-beta
part, row ranges for ``H_b``) run on the worker threads of :mod:`parallel`,
each with its own scratch; ``SCRATCH_BYTES`` sets the width of an alpha-beta
unit so that its buffers stay in the shared cache.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass, field
from math import ceil

import numpy as np

from integrity.solver.integrals import pair_symmetric
from integrity.solver.irrep_blocks import IRREPS, BlockLayout
from integrity.solver.parallel import run_units, workers
from integrity.solver.string_hamiltonian import string_hamiltonian
from integrity.solver.strings import occupation_matrix, strings
from integrity.solver.tables import excitation_table

__all__ = ["SCRATCH_BYTES", "BlockedTwoString", "build_blocked", "sigma_blocked", "unit_scratch_bytes"]

COMPRESS_FRACTION = 0.8
COMPRESS_ROWS = 200
"""The beta gather is compressed to the K pairs that reach each string when K <= 0.8 npair_Γ and
the source block has at least 200 alpha strings (smaller products cost more in calls than they save)."""

SCRATCH_BYTES = 6 * 2**20
"""Target scratch of one alpha-beta unit (B, G, gathered rows and offsets), per thread."""

_SAME_SPIN_UNITS_PER_WORKER = 4


@dataclass(frozen=True)
class Source:
    """Pair irrep ``gamma`` of a target block: its source block's alpha irrep and sizes."""

    gamma: int
    alpha_irrep: int
    rows: int  # alpha strings of the source block (na_s)
    npair: int
    prefix: int  # start of G_Γ in the flat buffer, in units of the width


@dataclass(frozen=True)
class Target:
    """Precomputed alpha side of one target block."""

    block: int
    alpha_irrep: int
    beta_irrep: int
    rows: int
    cols: int
    sources: tuple[Source, ...]
    total: int  # flat G length per beta string of the unit
    base: np.ndarray  # (rows, nent): prefix + local pair * na_s
    stride: np.ndarray  # (rows, nent): na_s
    column: np.ndarray  # (rows, nent): local Ja
    sign: np.ndarray  # (rows, 1, nent)
    width: int
    largest: int  # B scratch per beta string: max over Γ of K_Γ * na_s
    offsets: dict  # width -> (rows, nent, width) offsets of <Ia|E_pq|Ja> into the flat G of a unit


def _offsets(base, stride, column, width: int) -> np.ndarray:
    """``width * base + column + i * stride`` for ``i < width``: where ``<Ia|E_pq|Ja>`` reads G."""
    return (width * base + column)[:, :, None] + stride[:, :, None] * np.arange(width)


@dataclass(frozen=True)
class BlockedTwoString:
    """Everything blocked sigma needs, precomputed; energies exclude ``ecore``."""

    layout: BlockLayout
    dtype: np.dtype
    h_alpha: dict
    h_beta: dict
    pair_blocks: tuple  # transposed: pair_blocks[Γ][rs, pq] = (pq|rs)_ab
    beta_gather: dict
    targets: tuple[Target, ...]
    diagonal: np.ndarray
    nent: int
    scratch: threading.local = field(default_factory=threading.local, compare=False, repr=False)

    @property
    def size(self) -> int:
        return self.layout.size


def unit_scratch_bytes(rows: int, nent: int, total: int, largest_source: int, width: int, itemsize: int) -> int:
    """Scratch of one alpha-beta unit per beta string: G (total), B (largest K_Γ * na_s), gathered rows, offsets."""
    return width * ((total + largest_source + rows * nent) * itemsize + rows * nent * 8)


def _pairs(n: int, packed: bool, orbital_irreps: np.ndarray):
    """Pair labels in the table's order, their irreps and their index within their irrep."""
    if packed:
        p, q = np.tril_indices(n)
        order = np.argsort(p * (p + 1) // 2 + q)
        p, q = p[order], q[order]
    else:
        p, q = np.divmod(np.arange(n * n), n)
    irreps = orbital_irreps[p] ^ orbital_irreps[q]
    local = np.zeros(len(p), dtype=np.int64)
    for gamma in range(IRREPS):
        members = np.flatnonzero(irreps == gamma)
        local[members] = np.arange(len(members))
    return p, q, irreps, local


def _pair_blocks(eri_ab, p, q, irreps, dtype):
    blocks = []
    for gamma in range(IRREPS):
        members = np.flatnonzero(irreps == gamma)
        pp, qq = p[members], q[members]
        blocks.append(np.ascontiguousarray(eri_ab[pp, qq][:, pp, qq], dtype=dtype))
    return tuple(blocks)


def _compressed(excitations: int, npair: int, rows: int) -> bool:
    """Whether the per-string products (K of npair pairs) pay for their per-call cost here."""
    return excitations <= COMPRESS_FRACTION * npair and rows >= COMPRESS_ROWS


def _beta_gather(table, groups, pair_irreps, pair_local, npair_by_irrep, alpha_sizes, target):
    """Per target beta irrep ``Gb`` and pair irrep ``Γ``: the beta excitations, compressed.

    ``gather[(Gb, Γ)] = (row, sign, pair)``, each ``(nb[Gb], K)``: for target
    string ``Ib`` its ``K`` excitations ``E_rs`` of irrep ``Γ`` (padded with
    sign 0), ``pair`` the index of ``rs`` inside ``Γ`` and ``row`` the source
    string's row in ``[c_s.T | 0]`` (``s`` the block of beta irrep ``Gb ^ Γ``;
    the zero row ``nb_s`` for padding). ``sign`` has a trailing axis of 1.

    Where the compression does not pay (:func:`_compressed`), the plain form
    ``(row, sign, None)`` with ``row`` and ``sign`` of shape ``(npair_Γ, nb[Gb])``
    lists every pair of ``Γ`` (sign 0 where ``E_rs`` reaches no string).
    """
    gathers = {}
    for gb in range(IRREPS):
        targets = groups.members(gb)
        if len(targets) == 0:
            continue
        pair = table.pair[targets]
        source = table.source[targets]
        sign = table.sign[targets]
        gamma = pair_irreps[pair]
        for g in range(IRREPS):
            if npair_by_irrep[g] == 0:
                continue
            nb_s = groups.size(gb ^ g)
            hit = gamma == g
            count = hit.sum(axis=1)
            width = max(1, int(count.max(initial=0)))
            if not _compressed(width, int(npair_by_irrep[g]), alpha_sizes[gb ^ target ^ g]):
                row = np.full((npair_by_irrep[g], len(targets)), nb_s, dtype=np.int64)
                factor = np.zeros((npair_by_irrep[g], len(targets), 1))
                column = np.broadcast_to(np.arange(len(targets))[:, None], pair.shape)
                row[pair_local[pair[hit]], column[hit]] = groups.local[source[hit]]
                factor[pair_local[pair[hit]], column[hit], 0] = sign[hit]
                gathers[(gb, g)] = (row, factor, None)
                continue
            first = np.argsort(~hit, axis=1, kind="stable")[:, :width]  # the hits of each row, in table order
            valid = np.arange(width)[None, :] < count[:, None]
            picked_source = np.take_along_axis(source, first, axis=1)
            row = np.where(valid, groups.local[picked_source], nb_s)
            factor = np.where(valid, np.take_along_axis(sign, first, axis=1), 0).astype(np.float64)[:, :, None]
            local = np.where(valid, pair_local[np.take_along_axis(pair, first, axis=1)], 0)
            gathers[(gb, g)] = (row, factor, local)
    return gathers


def _targets(layout, table, pair_irreps, pair_local, npair_by_irrep, gathers, itemsize):
    nent = table.sign.shape[1]
    sizes = np.array([layout.alpha.size(g) for g in range(IRREPS)], dtype=np.int64)
    out = []
    for index, block in enumerate(layout.blocks):
        ga = block.alpha_irrep
        sources, prefix, largest = [], 0, 0
        starts = np.zeros(IRREPS, dtype=np.int64)
        compressed = np.zeros(IRREPS, dtype=bool)
        for gamma in range(IRREPS):
            rows_s = layout.alpha.size(ga ^ gamma)
            if npair_by_irrep[gamma] == 0 or rows_s == 0:
                continue
            starts[gamma] = prefix
            sources.append(Source(gamma, ga ^ gamma, rows_s, int(npair_by_irrep[gamma]), prefix))
            prefix += int(npair_by_irrep[gamma]) * rows_s
            row, _, local = gathers[(block.beta_irrep, gamma)]
            compressed[gamma] = local is not None
            largest = max(largest, (row.shape[1] if local is not None else row.shape[0]) * rows_s)
        members = layout.alpha.members(ga)
        pair = table.pair[members]
        source = table.source[members]
        gamma = pair_irreps[pair]
        rows_of_source = sizes[layout.alpha.irreps[source]]
        per_width = unit_scratch_bytes(block.rows, nent, prefix, largest, 1, itemsize)
        width = max(1, min(block.cols, SCRATCH_BYTES // max(1, per_width)))
        # G_Γ of a unit sits at width * prefix_Γ in the flat buffer, as (width, npair_Γ, na_s)
        # when its beta gather is compressed, else as (npair_Γ, width, na_s)
        squeezed = compressed[gamma]
        local_pair, local_source = pair_local[pair], layout.alpha.local[source]
        base = starts[gamma] + np.where(squeezed, 0, local_pair * rows_of_source)
        stride = np.where(squeezed, npair_by_irrep[gamma] * rows_of_source, rows_of_source)
        column = np.where(squeezed, local_pair * rows_of_source, 0) + local_source
        widths = {width, block.cols % width} - {0}
        out.append(
            Target(
                block=index,
                alpha_irrep=ga,
                beta_irrep=block.beta_irrep,
                rows=block.rows,
                cols=block.cols,
                sources=tuple(sources),
                total=prefix,
                base=base,
                stride=stride,
                column=column,
                sign=table.sign[members].astype(np.float64)[:, None, :],
                width=width,
                largest=largest,
                offsets={w: _offsets(base, stride, column, w) for w in widths},
            )
        )
    return tuple(out)


def _string_blocks(h, eri, n, k, groups, irreps_needed):
    return {g: string_hamiltonian(h, eri, n, k, members=groups.members(g)) for g in irreps_needed}


def _diagonal_of(matrices: dict, groups) -> np.ndarray:
    """Real diagonal of the string Hamiltonian over all strings (zero outside the built irreps)."""
    out = np.zeros(len(groups.irreps))
    for g, matrix in matrices.items():
        out[groups.members(g)] = np.real(matrix.diagonal())
    return out


def build_blocked(h_alpha, h_beta, eri_aa, eri_ab, eri_bb, layout: BlockLayout) -> BlockedTwoString:
    """Precompute string-Hamiltonian blocks, gathers and pair blocks for :func:`sigma_blocked`.

    For restricted orbitals pass the same arrays for alpha and beta and
    ``eri_aa = eri_ab = eri_bb = eri``.
    """
    n = h_alpha.shape[0]
    n_alpha, n_beta = layout.n_alpha, layout.n_beta
    dtype = np.dtype(np.result_type(h_alpha, h_beta, eri_aa, eri_ab, eri_bb, np.float64))
    packed = dtype == np.float64 and pair_symmetric(eri_ab)
    labels = layout.orbital_irreps
    p, q, pair_irreps, pair_local = _pairs(n, packed, labels)
    npair_by_irrep = np.bincount(pair_irreps, minlength=IRREPS)
    alpha_irreps = sorted({b.alpha_irrep for b in layout.blocks})
    beta_irreps = sorted({b.beta_irrep for b in layout.blocks})
    same = n_alpha == n_beta and h_alpha is h_beta and eri_aa is eri_bb
    ha = _string_blocks(h_alpha, eri_aa, n, n_alpha, layout.alpha, alpha_irreps)
    if same:
        missing = [g for g in beta_irreps if g not in ha]
        hb = {g: ha[g] for g in beta_irreps if g in ha} | _string_blocks(
            h_beta, eri_bb, n, n_beta, layout.beta, missing
        )
    else:
        hb = _string_blocks(h_beta, eri_bb, n, n_beta, layout.beta, beta_irreps)
    alpha_table = excitation_table(n, n_alpha, packed=packed)
    beta_table = alpha_table if n_alpha == n_beta else excitation_table(n, n_beta, packed=packed)
    diag_a = _diagonal_of(ha, layout.alpha)
    diag_b = _diagonal_of(hb, layout.beta)
    coulomb_ab = np.real(np.einsum("ppqq->pq", eri_ab))
    occ_a = occupation_matrix(strings(n, n_alpha), n)
    occ_b = occupation_matrix(strings(n, n_beta), n)
    parts = []
    for block in layout.blocks:
        ma, mb = layout.alpha.members(block.alpha_irrep), layout.beta.members(block.beta_irrep)
        parts.append((diag_a[ma][:, None] + diag_b[mb][None, :] + occ_a[ma] @ coulomb_ab @ occ_b[mb].T).ravel())
    has_pairs = alpha_table.sign.shape[1] and beta_table.sign.shape[1]
    alpha_sizes = [layout.alpha.size(g) for g in range(IRREPS)]
    gathers = (
        _beta_gather(beta_table, layout.beta, pair_irreps, pair_local, npair_by_irrep, alpha_sizes, layout.irrep)
        if has_pairs
        else {}
    )
    return BlockedTwoString(
        layout=layout,
        dtype=dtype,
        h_alpha=ha,
        h_beta=hb,
        pair_blocks=tuple(np.ascontiguousarray(block.T) for block in _pair_blocks(eri_ab, p, q, pair_irreps, dtype)),
        beta_gather=gathers,
        targets=_targets(layout, alpha_table, pair_irreps, pair_local, npair_by_irrep, gathers, dtype.itemsize)
        if has_pairs
        else (),
        diagonal=np.concatenate(parts),
        nent=alpha_table.sign.shape[1],
    )


def _buffers(op: BlockedTwoString, dtype) -> dict:
    """This thread's scratch for ``dtype``, grown to the largest unit of ``op``."""
    store = op.scratch.__dict__
    key = np.dtype(dtype).str
    if key not in store:
        g = max((t.width * t.total for t in op.targets), default=0)
        b = max((t.width * t.largest for t in op.targets), default=0)
        x = max((t.width * t.rows * op.nent for t in op.targets), default=0)
        store[key] = (np.empty(b, dtype=dtype), np.empty(g, dtype=dtype), np.empty(x, dtype=dtype))
    return store[key]


def _sources(op: BlockedTwoString, views, dtype) -> dict:
    """``[c_s.T | 0]`` by alpha irrep of the source block (a zero row if not stored)."""
    out = {}
    layout = op.layout
    for ga in range(IRREPS):
        rows = layout.alpha.size(ga)
        if rows == 0:
            continue
        block = layout.block_of_alpha(ga)
        if block is None:
            out[ga] = np.zeros((1, rows), dtype=dtype)
            continue
        c = views[layout.blocks.index(block)]
        cols = block.cols
        stacked = np.empty((cols + 1, rows), dtype=dtype)
        stacked[:cols] = c.T
        stacked[cols] = 0
        out[ga] = stacked
    return out


def _chunks(length: int) -> list[tuple[int, int]]:
    step = max(1, ceil(length / (_SAME_SPIN_UNITS_PER_WORKER * workers())))
    return [(start, min(length, start + step)) for start in range(0, length, step)]


def sigma_blocked(op: BlockedTwoString, c: np.ndarray) -> np.ndarray:
    """``sigma = P H P c`` for a flat blocked vector ``c`` (energies without ``ecore``).

    >>> from integrity.solver.irrep_blocks import block_layout
    >>> h = np.array([[0.0, -1.0], [-1.0, 0.0]]); eri = np.zeros((2, 2, 2, 2))
    >>> eri[0, 0, 0, 0] = eri[1, 1, 1, 1] = 4.0
    >>> op = build_blocked(h, h, eri, eri, eri, block_layout(2, 1, 1))
    >>> sigma_blocked(op, np.eye(2).ravel()).tolist()
    [4.0, -2.0, -2.0, 4.0]
    """
    dtype = np.result_type(op.dtype, c.dtype)
    c = np.ascontiguousarray(c, dtype=dtype)
    out = np.empty(len(c), dtype=dtype)
    layout = op.layout
    c_views, out_views = layout.views(c), layout.views(out)
    blocks = layout.blocks

    def alpha_unit(unit):
        k, lo, hi = unit
        out_views[k][:, lo:hi] = op.h_alpha[blocks[k].alpha_irrep] @ c_views[k][:, lo:hi]

    def beta_unit(unit):
        k, lo, hi = unit
        matrix = op.h_beta[blocks[k].beta_irrep]
        out_views[k][lo:hi] += (matrix @ c_views[k][lo:hi].T).T

    # BLAS is held to one thread by the solve around this call (solve_arrays; see parallel.py)
    run_units(alpha_unit, [(k, lo, hi) for k, b in enumerate(blocks) for lo, hi in _chunks(b.cols)])
    run_units(beta_unit, [(k, lo, hi) for k, b in enumerate(blocks) for lo, hi in _chunks(b.rows)])
    if op.targets:
        sources = _sources(op, c_views, dtype)
        units = [(t, start) for t in op.targets for start in range(0, t.cols, t.width)]
        run_units(lambda unit: _alpha_beta_unit(op, sources, out_views, dtype, *unit), units)
    return out


def _alpha_beta_unit(op, sources, out_views, dtype, target: Target, start: int) -> None:
    width = min(target.width, target.cols - start)
    stop = start + width
    b_buffer, g_buffer, x_buffer = _buffers(op, dtype)
    g = g_buffer[: width * target.total]
    for source in target.sources:
        row, factor, pair = op.beta_gather[(target.beta_irrep, source.gamma)]
        region = g[width * source.prefix : width * (source.prefix + source.npair * source.rows)]
        if pair is None:  # every pair of Γ: one product for the unit
            gathered = b_buffer[: source.npair * width * source.rows].reshape(source.npair, width, source.rows)
            np.take(sources[source.alpha_irrep], row[:, start:stop], axis=0, out=gathered, mode="clip")
            gathered *= factor[:, start:stop]
            np.matmul(
                op.pair_blocks[source.gamma].T,
                gathered.reshape(source.npair, width * source.rows),
                out=region.reshape(source.npair, width * source.rows),
            )
            continue
        excitations = row.shape[1]
        gathered = b_buffer[: width * excitations * source.rows].reshape(width, excitations, source.rows)
        np.take(sources[source.alpha_irrep], row[start:stop], axis=0, out=gathered, mode="clip")
        gathered *= factor[start:stop]
        # coupling[i, pq, k] = (pq|rs_k)_ab for the K excitations rs_k of beta string i
        coupling = np.take(op.pair_blocks[source.gamma], pair[start:stop], axis=0).transpose(0, 2, 1)
        np.matmul(coupling, gathered, out=region.reshape(width, source.npair, source.rows))
    rows = x_buffer[: target.rows * op.nent * width].reshape(target.rows, op.nent, width)
    np.take(g, target.offsets[width], out=rows, mode="clip")
    out_views[target.block][:, start:stop] += np.matmul(target.sign, rows)[:, 0, :]
