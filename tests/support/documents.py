"""The project's documents as test data: docs/format.md and docs/checks.md, the worked
example that docs/format.md prints, written as files by plain json and h5py (no library code),
and the repository's text files, which the document tests search line by line."""

from __future__ import annotations

import json
import re
from pathlib import Path

import h5py
import numpy as np
from locations import REPOSITORY

FORMAT = REPOSITORY / "docs/format.md"
CHECKS = REPOSITORY / "docs/checks.md"
#: the repository's own text, as the document tests search it
SEARCHED = (
    *("README.md", "DEVELOPERS.md", "pyproject.toml", ".ci"),
    *("docs", "integrity", "tests", "bench", "fixtures", "schemas"),
)
SKIPPED_FOLDERS = {"__pycache__", ".pytest_cache", ".hypothesis", ".ruff_cache"}
#: what the benchmarks write (ignored by git; thousands of generated files on a working machine)
BENCH_OUTPUT = REPOSITORY / "bench" / "out"


def read(path: Path) -> str:
    return path.read_text(encoding="utf-8")


def marked_block(text: str, name: str) -> str:
    """The fenced code block that follows ``<!-- name -->`` in markdown, without its fences."""
    match = re.search(r"<!-- " + re.escape(name) + r" -->\s*```[a-z]*\n(.*?)\n```", text, re.DOTALL)
    if match is None:
        raise AssertionError(f"no code block marked <!-- {name} -->")
    return match.group(1)


def example_text() -> str:
    """The worked example's JSON file, exactly as docs/format.md prints it."""
    return marked_block(read(FORMAT), "worked-example:json")


def example() -> dict:
    return json.loads(example_text())


def write_example_json(path: Path, doc: dict | None = None) -> Path:
    """The printed file as it is, or ``doc`` dumped with the json module."""
    path.write_text(example_text() if doc is None else json.dumps(doc), encoding="utf-8")
    return path


def write_example_hdf5(path: Path, doc: dict | None = None) -> Path:
    """The example's content written with plain h5py, as the HDF5 mapping table of
    docs/format.md says: scalars as attributes, arrays and integer lists as datasets,
    references as groups named by their label."""
    doc = example() if doc is None else doc

    def scalar(obj, key, value):
        if isinstance(value, bool):
            obj.attrs[key] = np.bool_(value)
        elif isinstance(value, int):
            obj.attrs[key] = np.int64(value)
        else:
            obj.attrs[key] = value  # float64 or str

    def array(node):
        return np.array(node["data"], dtype=np.float64).reshape(node["shape"])

    with h5py.File(path, "w") as out:
        for key in ("format", "format_version", "energy_unit", "title", "core_energy", "checksum"):
            if key in doc:
                scalar(out, key, doc[key])
        orbitals = out.create_group("orbitals")
        for key, value in doc["orbitals"].items():
            if key == "irreps":
                orbitals.create_dataset("irreps", data=np.array(value, dtype=np.int64))
            else:
                scalar(orbitals, key, value)
        for name in ("electrons", "core_energy_parts"):
            if name in doc:
                group = out.create_group(name)
                for key, value in doc[name].items():
                    scalar(group, key, value)
        out.create_dataset("one_electron", data=array(doc["one_electron"]))
        two = out.create_dataset("two_electron", data=array(doc["two_electron"]))
        for key in ("notation", "storage", "interaction", "antisymmetrized"):
            if key in doc["two_electron"]:
                scalar(two, key, doc["two_electron"][key])
        for ref in doc.get("references", []):
            group = out.create_group(f"references/{ref['label']}")
            for key, value in ref.items():
                if key == "occupation":
                    for spin, indices in value.items():
                        group.create_dataset(f"occupation/{spin}", data=np.array(indices, dtype=np.int64))
                elif key == "electrons":
                    counts = group.create_group("electrons")
                    for spin, count in value.items():
                        scalar(counts, spin, count)
                elif key != "label":
                    scalar(group, key, value)
        if "provenance" in doc:
            provenance = out.create_group("provenance")
            for key, value in doc["provenance"].items():
                if key == "history":
                    texts = [json.dumps(step) for step in value]
                    provenance.create_dataset("history", data=np.array(texts, dtype=h5py.string_dtype()))
                else:
                    scalar(provenance, key, value)
    return path


def text_files() -> list[Path]:
    files = []
    for name in SEARCHED:
        path = REPOSITORY / name
        if path.is_file():
            files.append(path)
        elif path.is_dir():
            files += [
                p
                for p in sorted(path.rglob("*"))
                if p.is_file() and not SKIPPED_FOLDERS & set(p.parts) and BENCH_OUTPUT not in p.parents
            ]
    return files


def read_text(path: Path) -> str | None:
    """The file's text, or None for a binary file."""
    data = path.read_bytes()
    if b"\x00" in data[:8192]:
        return None
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return None
