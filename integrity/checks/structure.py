"""Checks of form: schema, shapes, finite values, checksum, electron counts, core energy parts."""

from __future__ import annotations

import math

import numpy as np

from integrity.checks.registry import (
    OUTSIDE_FINGERPRINT,
    Result,
    at_element,
    at_field,
    failed,
    judged,
    passed,
    register,
    skipped,
    warned,
)
from integrity.io.schema import file_problems
from integrity.model.fingerprint import fingerprint
from integrity.model.hamiltonian import shape_problems
from integrity.model.slabs import current_slab_bytes

#: problems a message names; the result's details list every one
MAX_LISTED = 5


def listing(pairs) -> tuple[str, dict]:
    """A short text of the first problems and the details that list them all.

    ``pairs`` are (field, reason); the text names ``MAX_LISTED`` of them.
    """
    pairs = list(pairs)
    shown = "; ".join(f"{field}: {reason}" for field, reason in pairs[:MAX_LISTED])
    if len(pairs) > MAX_LISTED:
        shown += f"; and {len(pairs) - MAX_LISTED} more (the result's details list all {len(pairs)})"
    return shown, {"problems": [{"field": field, "reason": reason} for field, reason in pairs]}


def _listing(problems, locate) -> tuple[str, dict]:
    return listing((locate(p.path), p.message) for p in problems)


@register("schema", needs_hamiltonian=False)
def check_schema(ham, ctx) -> Result:
    """The metadata against schemas/hamiltonian.schema.json (JSON text or HDF5 tree)."""
    doc = ctx.document
    if doc is None:
        from integrity.io.content import content_from_hamiltonian
        from integrity.io.hdf5 import location, tree_of_content

        tree, entry, locate, notes = tree_of_content(content_from_hamiltonian(ham)), "hdf5_tree", location, ()
    else:
        tree, entry, locate, notes = doc.tree, doc.schema_entry, doc.locate, doc.notes
    problems = file_problems(tree, entry, notes)
    build_error = getattr(ctx, "build_error", None)
    if problems:
        text, details = _listing(problems, locate)
        return failed(
            f"{len(problems)} schema problem(s): {text}",
            value=float(len(problems)),
            limit=0.0,
            where=at_field(locate(problems[0].path)),
            details=details,
        )
    if build_error is not None and not _is_shape_error(build_error):
        return failed(
            f"the metadata is inconsistent: {build_error}",
            value=1.0,
            limit=0.0,
            where=at_field(build_error.field),
        )
    return passed(f"the metadata follows the schema ({entry})", value=0.0, limit=0.0)


def _is_shape_error(error) -> bool:
    return bool(error.field) and error.field.split(".")[0].strip("/") in ("one_electron", "two_electron")


def declared_arrays(doc) -> dict | None:
    """Shapes and dtypes the file declares, read without the values (None if not stated)."""
    tree = doc.tree
    out = {}
    for key in ("one_electron", "two_electron"):
        node = tree.get(key)
        if not isinstance(node, dict) or not _is_shape(node.get("shape")):
            return None
        if doc.container == "hdf5":
            dtype = node.get("dtype")
        else:
            dtype = "complex128" if "real" in node else "float64"
        out[key] = {"shape": tuple(node["shape"]), "dtype": dtype, "node": node}
    return out


def _is_shape(value) -> bool:
    """A list of non-negative integers (booleans and integers beyond 64 bits are not extents)."""
    return isinstance(value, list) and all(type(v) is int and 0 <= v < 2**63 for v in value)


def _json_length_problems(doc, declared) -> list[tuple[str, str]]:
    found = []
    for key, info in declared.items():
        expected = math.prod(info["shape"])
        for part in ("data", "real", "imag"):
            values = info["node"].get(part)
            if isinstance(values, list) and len(values) != expected:
                found.append(
                    (
                        f"{key}.{part}",
                        f"shape {list(info['shape'])} needs {expected} values, "
                        f"the list holds {len(values)} (a truncated or damaged array)",
                    )
                )
    return found


@register("arrays.shape", needs_hamiltonian=False)
def check_shapes(ham, ctx) -> Result:
    """Shapes and dtypes agree with orbitals.count, basis and storage."""
    doc = ctx.document
    if doc is not None:
        declared = declared_arrays(doc)
        tree = doc.tree
        orbitals = tree.get("orbitals") if isinstance(tree.get("orbitals"), dict) else {}
        two_node = tree.get("two_electron") if isinstance(tree.get("two_electron"), dict) else {}
        count, basis = orbitals.get("count"), orbitals.get("basis")
        flags = (two_node.get("storage"), two_node.get("notation"))
        if (
            declared is None
            or type(count) is not int
            or not 0 < count < 2**31
            or not isinstance(basis, str)
            or not all(flag is None or isinstance(flag, str) for flag in flags)
        ):
            return skipped(
                "the file does not state orbitals.count, basis and both array shapes in a form "
                "this check can use (the schema check says what is wrong)"
            )
        one, two = declared["one_electron"], declared["two_electron"]
        problems = list(
            shape_problems(
                basis=basis,
                count=count,
                storage=two_node.get("storage"),
                notation=two_node.get("notation"),
                one_shape=one["shape"],
                one_dtype=_dtype(one["dtype"]),
                two_shape=two["shape"],
                two_dtype=_dtype(two["dtype"]),
            )
        )
        if doc.container == "json":
            problems += _json_length_problems(doc, declared)
    else:
        count, basis = ham.n, ham.basis
        two_electron = ham.two_electron
        problems = list(
            shape_problems(
                basis=basis,
                count=count,
                storage=two_electron.storage,
                notation=two_electron.notation,
                one_shape=ham.one_electron.shape,
                one_dtype=ham.one_electron.dtype,
                two_shape=two_electron.array.shape,
                two_dtype=two_electron.array.dtype,
            )
        )
    if problems:
        text, details = listing(problems)
        return failed(
            f"{len(problems)} shape problem(s): {text}",
            value=float(len(problems)),
            limit=0.0,
            where=at_field(problems[0][0]),
            details=details,
        )
    return passed(f"shapes and dtypes fit {count} {basis} orbitals", value=0.0, limit=0.0)


def _dtype(name):
    try:
        return np.dtype(name)
    except (TypeError, ValueError):
        return np.dtype("V1")


@register("arrays.finite")
def check_finite(ham, ctx) -> Result:
    """NaN or infinite values in the arrays, core energy and reference energies."""
    scalars = [("core_energy", ham.core_energy)]
    scalars += [(f"core_energy_parts.{k}", v) for k, v in (ham.core_energy_parts or {}).items()]
    scalars += [(f"references[{r.label}].energy", r.energy) for r in ham.references]
    bad_scalars = [(name, v) for name, v in scalars if not math.isfinite(float(v))]
    first, total = None, 0
    for name, array in (("one_electron", ham.one_electron), ("two_electron", ham.two_electron.array)):
        index, count = _first_non_finite(array, current_slab_bytes())
        total += count
        if index is not None and first is None:
            first = at_element(name, index)
    total += len(bad_scalars)
    if first is None and bad_scalars:
        first = at_field(bad_scalars[0][0])
    if total:
        return failed(
            f"{total} value(s) are NaN or infinite, first at {first}; the producer may have "
            "written an undefined integral or the file was damaged",
            value=float(total),
            limit=0.0,
            where=first,
        )
    return passed("every value is finite", value=0.0, limit=0.0)


def _first_non_finite(array, slab_bytes):
    """(first index, count) of non-finite values, reading blocks of at most ``slab_bytes``."""
    shape = tuple(array.shape)
    if not shape:
        value = np.asarray(array[()])
        return (None, 0) if np.isfinite(value) else ((), 1)
    first, count = None, 0
    for key, origin in blocks(shape, np.dtype(array.dtype).itemsize, slab_bytes):
        block = np.asarray(array[key])
        if np.isfinite(np.sum(block)):
            continue  # a NaN or an infinity would make the sum non-finite
        bad = ~np.isfinite(block)
        found = int(np.count_nonzero(bad))
        if found and first is None:
            local = [int(i) for i in np.argwhere(bad)[0]]
            first = (*origin[:-1], origin[-1] + local[0], *local[1:])
        count += found
    return first, count


def blocks(shape: tuple, itemsize: int, budget: int):
    """``(key, origin)`` of blocks covering an array in C order, each at most ``budget`` bytes.

    A block is a run of indices along one axis with every later axis whole; ``key``
    indexes it (integers for the earlier axes, then a slice) and ``origin`` is the
    index of its first element along the axes up to the sliced one. One element is
    the smallest block, so even a budget below one row of an n^4 array is kept.

    >>> [key for key, _ in blocks((2, 3), 8, 16)]  # a row of 3 float64 is 24 bytes: split the rows
    [(0, slice(0, 2, None)), (0, slice(2, 3, None)), (1, slice(0, 2, None)), (1, slice(2, 3, None))]
    >>> [key for key, _ in blocks((2, 3), 8, 24)] == [(slice(0, 1, None),), (slice(1, 2, None),)]
    True
    >>> [origin for _, origin in blocks((2, 2, 2), 8, 8)][:3]
    [(0, 0, 0), (0, 0, 1), (0, 1, 0)]
    """
    axis = 0
    while axis < len(shape) - 1 and math.prod(shape[axis + 1 :]) * itemsize > budget:
        axis += 1
    inner = math.prod(shape[axis + 1 :]) * itemsize
    rows = max(1, budget // max(1, inner))
    for outer in np.ndindex(*shape[:axis]):
        outer = tuple(int(i) for i in outer)
        for start in range(0, shape[axis], rows):
            yield (*outer, slice(start, min(start + rows, shape[axis]))), (*outer, start)


@register("checksum")
def check_checksum(ham, ctx) -> Result:
    """The fingerprint recomputed against the stored checksum."""
    computed = fingerprint(ham)
    if ham.checksum is None:
        return warned(
            "no checksum stored: a change to the data after it was written cannot be detected "
            "(write the file with integrity, or convert it, to store one)",
            where=at_field("checksum"),
            details={"computed": computed},
        )
    if computed != ham.checksum:
        return failed(
            f"1 fingerprint differs: stored {ham.checksum[:19]}... but the content gives {computed[:19]}...; "
            "the data or the identifying metadata changed after the checksum was written (an altered or truncated "
            "transfer, or an edit without a new fingerprint)",
            value=1.0,
            limit=0.0,
            where=at_field("checksum"),
            details={"stored": ham.checksum, "computed": computed},
        )
    return passed("the fingerprint matches the stored checksum", value=0.0, limit=0.0, details={"computed": computed})


@register("electrons.count")
def check_electrons(ham, ctx) -> Result:
    """Electron counts fit the orbitals; references' counts, 2S and occupations are reachable."""
    per_spin = ham.orbitals.per_spin
    problems = []
    for spin in ("alpha", "beta"):
        count = getattr(ham.electrons, spin)
        if count > per_spin:
            problems.append(("electrons." + spin, f"{count} {spin} electrons do not fit {per_spin} orbitals per spin"))
    for ref in ham.references:
        where = f"references[{ref.label}]"
        electrons = ham.electrons_of(ref)
        total = electrons.total
        for spin in ("alpha", "beta"):
            count = getattr(electrons, spin)
            if count > per_spin:
                problems.append(
                    (f"{where}.electrons.{spin}", f"{count} {spin} electrons do not fit {per_spin} orbitals")
                )
        if ref.two_s is not None:
            unpaired_max = min(total, 2 * per_spin - total)
            if ref.two_s > unpaired_max:
                problems.append(
                    (
                        f"{where}.two_s",
                        f"2S = {ref.two_s} is out of reach for {total} electrons in "
                        f"{per_spin} orbitals per spin (at most {unpaired_max})",
                    )
                )
            if (ref.two_s - total) % 2:
                problems.append((f"{where}.two_s", f"2S = {ref.two_s} has the wrong parity for {total} electrons"))
            if abs(electrons.alpha - electrons.beta) > ref.two_s:
                problems.append(
                    (
                        f"{where}.two_s",
                        f"2S = {ref.two_s} is below |alpha - beta| = "
                        f"{abs(electrons.alpha - electrons.beta)}; no such state has these counts",
                    )
                )
        if ref.occupation is not None:
            listed = (len(ref.occupation[0]), len(ref.occupation[1]))
            if listed != (electrons.alpha, electrons.beta):
                hint = " (alpha and beta look swapped)" if listed == (electrons.beta, electrons.alpha) else ""
                problems.append(
                    (
                        f"{where}.occupation",
                        f"lists {listed[0]} alpha and {listed[1]} beta orbitals "
                        f"for {electrons.alpha} alpha and {electrons.beta} beta electrons{hint}",
                    )
                )
            if ham.basis == "spin-orbital":
                problems += _spin_orbital_occupation_problems(ham, where, ref.occupation)
    if problems:
        text, details = listing(problems)
        return failed(
            f"{len(problems)} problem(s): {text}",
            value=float(len(problems)),
            limit=0.0,
            where=at_field(problems[0][0]),
            details=details,
        )
    return passed(
        f"{ham.electrons.alpha} alpha and {ham.electrons.beta} beta electrons fit {per_spin} orbitals "
        "per spin; every reference is reachable",
        value=0.0,
        limit=0.0,
    )


def _spin_orbital_occupation_problems(ham, where, occupation):
    from integrity.model.indexing import spin_of_spin_orbitals

    spins = spin_of_spin_orbitals(ham.n, ham.orbitals.spin_layout)
    found = []
    for spin_value, (spin, indices) in enumerate(zip(("alpha", "beta"), occupation, strict=True)):
        wrong = [i for i in indices if spins[i] != spin_value]
        if wrong:
            found.append(
                (
                    f"{where}.occupation.{spin}",
                    f"spin orbitals {wrong} are not {spin} in the {ham.orbitals.spin_layout} layout",
                )
            )
    return found


@register("core_energy.parts", limit=1e-10)
def check_core_parts(ham, ctx) -> Result:
    """The parts of the core energy add up to core_energy."""
    parts = ham.core_energy_parts
    if not parts:
        return warned(
            f"not run: no core_energy_parts stored (core_energy_parts is {OUTSIDE_FINGERPRINT}); "
            "core_energy cannot be traced to its parts",
            where=at_field("core_energy_parts"),
        )
    total = float(sum(parts.values()))
    difference = abs(total - ham.core_energy)
    if difference > ctx.limit:
        hints = [
            f"core_energy equals {name} alone: the other parts are missing from it"
            for name, value in parts.items()
            if value != 0 and abs(value - ham.core_energy) <= ctx.limit and len(parts) > 1
        ]
        missing = [
            f"the difference equals {name}: that part is missing from core_energy"
            for name, value in parts.items()
            if abs(abs(value) - difference) <= ctx.limit and value != 0
        ]
        cause = "; ".join(hints + missing) or "a part is missing, or core_energy was edited alone"
        return judged(
            True,
            f"the parts add up to {total:.12g} but core_energy is {ham.core_energy:.12g} "
            f"(difference {difference:.3g}); {cause}",
            value=difference,
            limit=ctx.limit,
            where=at_field("core_energy"),
        )
    return judged(False, f"{len(parts)} part(s) add up to core_energy", value=difference, limit=ctx.limit)
