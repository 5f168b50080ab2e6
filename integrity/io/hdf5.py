"""The HDF5 container (h5py).

Layout (docs/format.md): root attributes ``format``, ``format_version``,
``energy_unit``, ``title``, ``core_energy``, ``checksum``; groups
``orbitals`` (attributes, dataset ``irreps``), ``electrons``,
``core_energy_parts``, ``references/<label>`` (attributes; groups
``electrons`` and ``occupation`` with datasets ``alpha``, ``beta``),
``provenance`` (attributes, dataset ``history`` of JSON strings); datasets
``one_electron`` and ``two_electron`` (attributes ``notation``, ``storage``,
``interaction``, ``antisymmetrized``).

Reading accepts any chunking, compression and byte order, strings stored
fixed-length or variable-length, complex values as h5py's (r, i) compound or
any compound of two float64 fields, and booleans stored as integers 0/1
(HDF5 has no native boolean). In messages an HDF5 location is written as
``/group/dataset`` and an attribute as ``/group@name`` (``/@name`` at the root).
"""

from __future__ import annotations

import json
import math

import h5py
import numpy as np

from integrity.errors import ContainerError, FieldError, IntegrityError
from integrity.io.atomic import atomic_output
from integrity.io.content import history_entry_from_text, plain
from integrity.io.document import Document, format_bytes, require_declared_size

ARRAY_DATASETS = ("one_electron", "two_electron")
BOOLEAN_ATTRIBUTES = ("canonical", "antisymmetrized")
_SMALL_DATASET_LIMIT = 10**6
#: what h5py raises on damaged metadata, besides OSError
_H5PY_ERRORS = (KeyError, RuntimeError, OSError, ValueError, TypeError, UnicodeDecodeError)


class StoredArray:
    """A lazily read HDF5 dataset presented as float64 or complex128 in native byte order.

    Slicing reads only the slice. ``shape`` and ``dtype`` are available without reading.
    """

    def __init__(self, dataset: h5py.Dataset, name: str):
        self.dataset = dataset
        self.name = name
        self.shape = tuple(dataset.shape)
        stored = dataset.dtype
        self._fields = None
        if (
            stored.names is not None
            and len(stored.names) == 2
            and all(stored.fields[f][0].kind == "f" and stored.fields[f][0].itemsize == 8 for f in stored.names)
        ):
            self._fields = stored.names
            self.dtype = np.dtype(np.complex128)
        else:
            self.dtype = stored.newbyteorder("=") if stored.byteorder not in ("=", "|") else stored

    @property
    def nbytes(self) -> int:
        return int(np.prod(self.shape, dtype=np.int64)) * self.dtype.itemsize

    def __getitem__(self, key):
        try:
            raw = self.dataset[key]
        except (OSError, RuntimeError) as err:
            raise ContainerError(
                self.name, f"cannot read the data ({err}); the file may be truncated or damaged"
            ) from None
        if self._fields is not None:
            real, imag = self._fields
            out = np.empty(raw.shape, dtype=np.complex128)
            out.real, out.imag = raw[real], raw[imag]
            return out
        return np.asarray(raw, dtype=self.dtype)

    def __array__(self, dtype=None, copy=None):
        data = self[()]
        return data if dtype is None else data.astype(dtype)


def _plain(value):
    """An attribute value as a plain Python value (an empty HDF5 attribute is None)."""
    return None if isinstance(value, h5py.Empty) else plain(value)


def _small_dataset(dataset: h5py.Dataset, location: str):
    if dataset.size > _SMALL_DATASET_LIMIT:
        raise FieldError(location, f"holds {dataset.size} elements; a metadata list this long is not plausible")
    try:
        values = dataset[()]
    except OSError as err:
        raise ContainerError(location, f"cannot read ({err}); the file may be truncated") from None
    if dataset.dtype.kind in "SO" or h5py.check_string_dtype(dataset.dtype) is not None:
        return [_plain(v) for v in np.atleast_1d(values).tolist()]
    return _plain(np.atleast_1d(values))


#: groups nest at most this deep (the format needs 3: /references/<label>/occupation)
MAX_DEPTH = 16


def _attributes(obj, location: str) -> dict:
    out = {}
    for key, value in obj.attrs.items():
        try:
            value = _plain(value)
        except UnicodeDecodeError as err:
            where = f"{location.rstrip('/')}@{key}" if location != "/" else f"/@{key}"
            raise ContainerError(
                where, f"a byte string that is not UTF-8 (byte {err.object[err.start]:#04x} at {err.start})"
            ) from None
        if key in BOOLEAN_ATTRIBUTES and type(value) is int and value in (0, 1):
            value = bool(value)
        out[key] = value
    return out


def _read_tree(handle: h5py.File, arrays: dict, notes: list, budget: int | None = None) -> dict:
    """The file's groups, attributes and dataset descriptors as nested dicts, walked without recursion.

    Refused (ContainerError naming the location): groups nested deeper than
    :data:`MAX_DEPTH`, a link back to a group above it (a loop) or to an object
    already read, external links, datasets stored outside the file (external
    raw storage, virtual datasets), datasets declaring more than they store.
    A soft link to nothing is left out of the tree and noted in ``notes``
    (path, message) for the schema check. With a ``budget`` (bytes) the arrays
    are to be read into memory, so a declared size beyond it is refused first.
    """
    try:
        tree = _attributes(handle, "/")
    except IntegrityError:
        raise
    except _H5PY_ERRORS as err:
        raise _damaged("/", err) from None
    seen = {handle.id}
    pending = [(handle, (), tree, (handle.id,))]
    while pending:
        group, parts, node, above = pending.pop()
        try:
            keys = list(group)
        except _H5PY_ERRORS as err:
            raise _damaged(location(parts) if parts else "/", err) from None
        for key in keys:
            path = (*parts, key)
            try:
                _visit(group, key, path, node, above, seen, pending, arrays, notes, budget)
            except IntegrityError:
                raise
            except _H5PY_ERRORS as err:
                raise _damaged("/" + "/".join(path), err) from None
    return tree


def _damaged(where: str, err: Exception) -> ContainerError:
    return ContainerError(where, f"damaged HDF5 metadata ({type(err).__name__}: {_excerpt(str(err))})")


def _excerpt(text: str, limit: int = 80) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _visit(group, key, path, node, above, seen, pending, arrays, notes, budget) -> None:
    where = "/" + "/".join(path)
    link = group.get(key, getlink=True)
    if isinstance(link, h5py.ExternalLink):
        raise ContainerError(
            where,
            f"an external link to {link.filename}:{link.path}; the data must be stored in the file itself",
        )
    if isinstance(link, h5py.SoftLink) and link.path not in group:
        notes.append((path, f"a soft link to {_excerpt(link.path)}, which does not exist"))
        return
    member = group.get(key)
    if member is None:
        notes.append((path, "an object h5py cannot read (not a group or a dataset)"))
        return
    if member.id in above:
        target = "/" + "/".join(path[: above.index(member.id)])
        raise ContainerError(where, f"a link back to {target}, a group that holds it (a loop)")
    if member.id in seen:
        raise ContainerError(where, f"a second name for {member.name}, which was already read")
    seen.add(member.id)
    if isinstance(member, h5py.Group):
        if len(path) >= MAX_DEPTH:
            raise ContainerError(_excerpt(where), f"groups nested deeper than {MAX_DEPTH} levels")
        node[key] = _attributes(member, where)
        pending.append((member, path, node[key], (*above, member.id)))
    elif isinstance(member, h5py.Dataset):
        is_array = path in (("one_electron",), ("two_electron",))
        if is_array and budget is not None:
            require_declared_size(where, member.shape, member.dtype.itemsize, budget)
        _require_stored_here(member, where)
        if is_array:
            stored = StoredArray(member, key)
            arrays[key] = stored
            node[key] = {"shape": list(stored.shape), "dtype": stored.dtype.name} | _attributes(member, where)
        else:
            node[key] = _small_dataset(member, where)
    else:
        notes.append((path, f"a {type(member).__name__}, not a group or a dataset"))


def _require_stored_here(dataset: h5py.Dataset, where: str) -> None:
    """Refuse data kept outside the file, and declared data that is not stored (before reading any)."""
    if dataset.is_virtual:
        raise ContainerError(where, "a virtual dataset (its data is elsewhere); store the values in the file")
    if dataset.external:
        raise ContainerError(
            where,
            f"its data is stored outside the file, in {dataset.external[0][0]!r}; store the values in the file itself",
        )
    if h5py.check_string_dtype(dataset.dtype) is not None or dataset.dtype.kind == "O" or dataset.size == 0:
        return
    declared = int(dataset.size) * dataset.dtype.itemsize
    if dataset.chunks is not None:
        expected = math.prod(-(-extent // chunk) for extent, chunk in zip(dataset.shape, dataset.chunks, strict=True))
        allocated = dataset.id.get_num_chunks()
        if allocated < expected:
            raise ContainerError(
                where,
                f"declares {format_bytes(declared)} in {expected} chunks but stores {allocated} of "
                f"them ({format_bytes(dataset.id.get_storage_size())}); the values were never written",
            )
    elif dataset.id.get_create_plist().get_layout() == h5py.h5d.CONTIGUOUS:
        stored = dataset.id.get_storage_size()
        if stored < declared:
            raise ContainerError(
                where,
                f"declares {format_bytes(declared)} but stores {format_bytes(stored)}; the values were never written",
            )


_DATASETS = {("one_electron",), ("two_electron",), ("orbitals", "irreps"), ("provenance", "history")}
_GROUPS = {("orbitals",), ("electrons",), ("core_energy_parts",), ("references",), ("provenance",)}


def _is_dataset(parts: tuple) -> bool:
    return parts in _DATASETS or (len(parts) == 4 and parts[0] == "references" and parts[2] == "occupation")


def location(path: tuple) -> str:
    """HDF5 location of a tree path: groups and datasets by path, attributes after ``@``.

    >>> location(("two_electron", "notation")), location(("core_energy",))
    ('/two_electron@notation', '/@core_energy')
    >>> location(("references", "hf", "occupation", "alpha")), location(("references", "hf"))
    ('/references/hf/occupation/alpha', '/references/hf')
    >>> location(("orbitals", "irreps", 1))
    '/orbitals/irreps[1]'

    """
    parts = tuple(str(p) for p in path)
    if not parts:
        return "/"
    for cut in range(len(parts) - 1, 0, -1):  # an element of a dataset: /orbitals/irreps[1]
        head = parts[:cut]
        if all(p.isdigit() for p in parts[cut:]) and _is_dataset(head):
            return "/" + "/".join(head) + "".join(f"[{p}]" for p in parts[cut:])
    in_reference = parts[0] == "references"
    is_dataset = _is_dataset(parts)
    is_group = parts in _GROUPS or (
        in_reference and (len(parts) == 2 or (len(parts) == 3 and parts[2] in ("electrons", "occupation")))
    )
    if is_dataset or is_group:
        return "/" + "/".join(parts)
    return "/" + "/".join(parts[:-1]) + "@" + parts[-1]


def read(path: str, *, memory: int, lazy: bool | str = False) -> Document:
    """Open an HDF5 Hamiltonian file.

    Declared array sizes are checked against ``memory`` (bytes) before any
    array is read; with ``lazy`` the arrays stay on disk as :class:`StoredArray`
    (readable until the document is closed); ``lazy="auto"`` keeps on disk only
    arrays larger than a quarter of ``memory``.
    """
    handle = _open(path)
    arrays: dict = {}
    notes: list = []
    try:
        tree = _read_tree(handle, arrays, notes, budget=None if lazy else memory)
    except IntegrityError as err:
        handle.close()
        raise err.in_file(path) from None
    except _H5PY_ERRORS as err:
        handle.close()
        raise ContainerError(None, f"damaged HDF5 metadata ({type(err).__name__}: {err})", str(path)) from None
    except BaseException:
        handle.close()
        raise
    return Document(
        path=str(path),
        container="hdf5",
        tree=tree,
        notes=notes,
        locate=location,
        decoder=lambda: _content(tree, arrays, memory, lazy),
        closer=handle.close,
    )


def _open(path) -> h5py.File:
    try:
        return h5py.File(path, "r")
    except FileNotFoundError:
        raise ContainerError(None, "no such file", str(path)) from None
    except OSError as err:
        text = str(err)
        if "truncated" in text:
            reason = f"truncated HDF5 file ({_detail(text)}); the transfer may be incomplete"
        elif "signature" in text:
            reason = "not an HDF5 file (no HDF5 signature at the start)"
        else:
            reason = f"cannot open as HDF5 ({_detail(text)})"
        raise ContainerError(None, reason, str(path)) from None


def _detail(text: str) -> str:
    inner = text[text.find("(") + 1 : text.rfind(")")] if "(" in text else text
    return inner or text


def _content(tree: dict, arrays: dict, memory: int, lazy: bool) -> dict:
    content = {k: v for k, v in tree.items() if k not in ("references", "provenance", *ARRAY_DATASETS)}
    for key in ARRAY_DATASETS:
        if key not in arrays:
            continue
        stored = arrays[key]
        keep_on_disk = lazy is True or (lazy == "auto" and stored.nbytes > memory // 4)
        if not keep_on_disk:
            require_declared_size(key, stored.shape, stored.dtype.itemsize, memory)
            array = stored[()]
        else:
            array = stored
        if key == "two_electron":
            flags = {k: v for k, v in tree[key].items() if k not in ("shape", "dtype")}
            content[key] = {"array": array, **flags}
        else:
            content[key] = array
    if "references" in tree and isinstance(tree["references"], dict):
        content["references"] = [_reference(label, node) for label, node in tree["references"].items()]
    if "provenance" in tree and isinstance(tree["provenance"], dict):
        provenance = dict(tree["provenance"])
        if "history" in provenance and isinstance(provenance["history"], list):
            provenance["history"] = [history_entry_from_text(step) for step in provenance["history"]]
        content["provenance"] = provenance
    return content


def _reference(label: str, node) -> dict:
    entry = dict(node) if isinstance(node, dict) else {}
    entry["label"] = label
    return entry


def tree_of_content(content: dict) -> dict:
    """The tree an HDF5 reader would see for this content (what the schema validates)."""
    tree = {k: v for k, v in content.items() if k not in ("references", "provenance", *ARRAY_DATASETS)}
    for key in ARRAY_DATASETS:
        if key in content:
            node = content[key]
            array = node["array"] if key == "two_electron" else node
            flags = {k: v for k, v in node.items() if k != "array"} if key == "two_electron" else {}
            tree[key] = {"shape": list(array.shape), "dtype": np.dtype(array.dtype).name} | flags
    if content.get("references"):
        tree["references"] = {e["label"]: {k: v for k, v in e.items() if k != "label"} for e in content["references"]}
    if "provenance" in content:
        provenance = dict(content["provenance"])
        if "history" in provenance:
            provenance["history"] = [json.dumps(s, sort_keys=True) for s in provenance["history"]]
        tree["provenance"] = provenance
    return tree


def write(
    content: dict, path, *, overwrite: bool = False, compression: str | None = None, compression_opts=None, chunks=None
) -> None:
    """Write a content dict as an HDF5 file, atomically (see :mod:`integrity.io.atomic`).

    ``compression`` is None, ``"gzip"`` or ``"lzf"``; ``chunks`` as h5py takes it.
    Lazy arrays (:class:`StoredArray`) are copied slab by slab.
    """
    if compression not in (None, "gzip", "lzf"):
        raise FieldError("compression", f"{compression!r} is not offered; use 'gzip' or 'lzf'")
    options = {"compression": compression, "compression_opts": compression_opts, "chunks": chunks}
    with atomic_output(path, overwrite=overwrite) as tmp, h5py.File(tmp, "w", track_order=True) as out:
        for key in ("format", "format_version", "energy_unit", "title", "core_energy", "checksum"):
            if key in content:
                out.attrs[key] = content[key]
        orbitals = out.create_group("orbitals", track_order=True)
        for key, value in content["orbitals"].items():
            if key == "irreps":
                orbitals.create_dataset("irreps", data=np.asarray(value, dtype=np.int64))
            else:
                orbitals.attrs[key] = value
        _attribute_group(out, "electrons", content["electrons"])
        if "core_energy_parts" in content:
            _attribute_group(out, "core_energy_parts", content["core_energy_parts"])
        _write_array(out, "one_electron", content["one_electron"], options)
        two = content["two_electron"]
        dataset = _write_array(out, "two_electron", two["array"], options)
        for key, value in two.items():
            if key != "array":
                dataset.attrs[key] = value
        if content.get("references"):
            _write_references(out, content["references"])
        if "provenance" in content:
            _write_provenance(out, content["provenance"])


def _attribute_group(parent, name, values: dict):
    group = parent.create_group(name, track_order=True)
    for key, value in values.items():
        group.attrs[key] = value
    return group


def _write_array(parent, name, array, options):
    opts = {k: v for k, v in options.items() if v is not None}
    if isinstance(array, StoredArray):
        dataset = parent.create_dataset(name, shape=array.shape, dtype=array.dtype, **opts)
        rows = max(1, (64 * 2**20) // max(1, array.nbytes // max(1, array.shape[0])))
        for start in range(0, array.shape[0], rows):
            dataset[start : start + rows] = array[start : start + rows]
        return dataset
    data = np.asarray(array)
    if data.ndim == 0 or data.size == 0:
        opts.pop("chunks", None)
        opts.pop("compression", None)
        opts.pop("compression_opts", None)
    return parent.create_dataset(name, data=data, **opts)


def _write_references(out, references):
    group = out.create_group("references", track_order=True)
    for entry in references:
        node = group.create_group(entry["label"], track_order=True)
        for key, value in entry.items():
            if key == "label":
                continue
            if key == "electrons":
                _attribute_group(node, "electrons", value)
            elif key == "occupation":
                occ = node.create_group("occupation", track_order=True)
                for spin in ("alpha", "beta"):
                    occ.create_dataset(spin, data=np.asarray(value[spin], dtype=np.int64))
            else:
                node.attrs[key] = value


def _write_provenance(out, provenance):
    group = out.create_group("provenance", track_order=True)
    for key, value in provenance.items():
        if key == "history":
            texts = [json.dumps(step, sort_keys=True) for step in value]
            group.create_dataset("history", data=np.array(texts, dtype=h5py.string_dtype()), dtype=h5py.string_dtype())
        else:
            group.attrs[key] = value
