"""HDF5 files built to break the reader: links that loop or lead nowhere, deep nesting,
data kept outside the file, datasets that declare far more than they store, damaged
metadata. Each is written with plain h5py from a valid tree and must give a finding or
one line with exit status 2, never a traceback, a hang or a large allocation.
"""

from __future__ import annotations

import json
import tracemalloc

import h5py
import numpy as np
import pytest
from command_line import one_error_line
from doubles import MeteredArray
from plain_format import random_tree, write_plain_hdf5

from integrity.checks import check
from integrity.checks.structure import _first_non_finite, blocks
from integrity.cli import main
from integrity.errors import ContainerError
from integrity.io import load


@pytest.fixture
def good(tmp_path, rng):
    """A valid file written with plain h5py (the tree is kept beside it)."""
    tree = random_tree(rng, n=2, wide=False)
    path = tmp_path / "good.h5"
    write_plain_hdf5(tree, path)
    return path, tree


def edited(path, edit):
    with h5py.File(path, "r+") as handle:
        edit(handle)
    return path


def replace_two_electron(handle, **create):
    """Replace /two_electron by a dataset made with ``create`` (keeping its attributes)."""
    attrs = dict(handle["two_electron"].attrs)
    del handle["two_electron"]
    dataset = handle.create_dataset("two_electron", **create)
    dataset.attrs.update(attrs)
    return dataset


def checked(runner, *paths) -> list[dict]:
    result = runner.invoke(
        main, ["check", "--format", "json", "--jobs", "1", "--no-policy", "--no-cache", *map(str, paths)]
    )
    assert result.exit_code in (1, 2), result.output
    assert "Traceback" not in result.output
    return json.loads(result.stdout)["files"]


def unreadable_with(runner, path, *fragments) -> str:
    """The file is refused by load, show and check alike, each naming these fragments."""
    with pytest.raises(ContainerError) as caught:
        load(path)
    message = str(caught.value)
    assert message.startswith(f"{path}: ")
    line = one_error_line(runner, ["show", str(path)])
    assert line == f"error: {message}"
    (report,) = checked(runner, path)
    assert report["status"] == "unreadable"
    for fragment in fragments:
        assert fragment in message, message
        assert fragment in report["error"], report["error"]
    return message


# ------------------------------------------------------------------ links


def test_a_soft_link_to_nowhere_is_a_schema_finding_naming_the_link(runner, good):
    path, _ = good

    def edit(handle):
        del handle["orbitals/irreps"]
        handle["orbitals/irreps"] = h5py.SoftLink("/nowhere")

    edited(path, edit)
    (report,) = checked(runner, path)
    schema = next(c for c in report["checks"] if c["id"] == "schema")
    assert report["status"] == "fail" and schema["status"] == "fail"
    assert schema["where"]["field"] == "/orbitals/irreps"
    assert "soft link to /nowhere" in schema["message"]
    line = one_error_line(runner, ["show", str(path)])
    assert "/orbitals/irreps" in line and "/nowhere" in line


@pytest.mark.slow
@pytest.mark.parametrize("kind", ["hard", "soft"])
@pytest.mark.parametrize("where", ["provenance", "references/hf"])
def test_a_link_back_to_the_root_is_refused_as_a_loop(runner, good, kind, where):
    path, _ = good
    edited(path, lambda h: h[where].__setitem__("loop", h["/"] if kind == "hard" else h5py.SoftLink("/")))
    message = unreadable_with(runner, path, f"/{where}/loop", "loop")
    assert "link back to /" in message


def test_a_hard_link_to_a_group_above_is_refused_naming_that_group(runner, good):
    path, _ = good
    edited(path, lambda h: h["references/hf"].__setitem__("up", h["references"]))
    unreadable_with(runner, path, "/references/hf/up", "a link back to /references")


def test_twelve_hundred_nested_groups_are_refused_at_the_depth_bound(runner, good):
    path, _ = good

    def edit(handle):
        group = handle["provenance"]
        for _ in range(1200):
            group = group.create_group("g")

    edited(path, edit)
    unreadable_with(runner, path, "/provenance/g/g", "deeper than 16 levels")


def test_an_external_link_to_another_files_array_is_refused(runner, good, tmp_path):
    path, tree = good
    other = tmp_path / "other.h5"
    write_plain_hdf5(tree, other)

    def edit(handle):
        del handle["two_electron"]
        handle["two_electron"] = h5py.ExternalLink(str(other), "/two_electron")

    edited(path, edit)
    unreadable_with(runner, path, "/two_electron", "external link", "other.h5")


# ------------------------------------------------------------------ data outside the file


def test_external_raw_storage_is_refused_even_with_the_right_bytes(runner, good, tmp_path):
    path, tree = good
    values = np.asarray(tree["two_electron"]["array"], dtype="<f8")
    raw = tmp_path / "values.bin"
    raw.write_bytes(values.tobytes())
    edited(
        path,
        lambda h: replace_two_electron(h, shape=values.shape, dtype="<f8", external=[(str(raw), 0, values.nbytes)]),
    )
    unreadable_with(runner, path, "/two_electron", "outside the file", "values.bin")


def test_a_virtual_dataset_is_refused(runner, good):
    path, tree = good
    values = np.asarray(tree["two_electron"]["array"])

    def edit(handle):
        handle.create_dataset("source", data=values)
        layout = h5py.VirtualLayout(shape=values.shape, dtype="f8")
        layout[...] = h5py.VirtualSource(handle["source"])
        attrs = dict(handle["two_electron"].attrs)
        del handle["two_electron"]
        handle.create_virtual_dataset("two_electron", layout).attrs.update(attrs)

    edited(path, edit)
    unreadable_with(runner, path, "/two_electron", "virtual dataset")


# ------------------------------------------------------------------ declared against stored


def _declare_unwritten(path, n, chunks):
    def edit(handle):
        handle["orbitals"].attrs["count"] = n
        del handle["orbitals/irreps"]
        del handle["references"]
        del handle["one_electron"]
        handle.create_dataset("one_electron", data=np.eye(n))
        replace_two_electron(handle, shape=(n,) * 4, dtype="f8", chunks=chunks)

    return edited(path, edit)


@pytest.mark.slow
@pytest.mark.parametrize("n", [300, 1000])
def test_a_small_file_declaring_a_huge_unwritten_chunked_array_is_refused_at_once(runner, good, n):
    path, _ = good
    _declare_unwritten(path, n, chunks=(1, 1, n, n))
    assert path.stat().st_size < 20 * n * n  # the file holds h and nothing of the n^4 array
    tracemalloc.start()
    try:
        report = check(path, memory=2**30)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert report.status == "unreadable"
    declared = n**4 * 8
    assert "/two_electron" in report.error and "stores 0 of them" in report.error
    assert f"{declared / 2**40:.3g} TiB" in report.error or f"{declared / 2**30:.3g} GiB" in report.error
    assert peak < 64 * 2**20, f"{peak} bytes allocated while refusing the file"
    (entry,) = checked(runner, path)
    assert entry["status"] == "unreadable" and "never written" in entry["error"]
    # show reads the arrays into memory: the declared size is refused against the budget first
    assert "beyond the memory budget" in one_error_line(runner, ["show", str(path)])


def test_a_chunked_array_with_one_chunk_missing_is_refused(runner, good):
    path, tree = good
    values = np.asarray(tree["two_electron"]["array"])

    def edit(handle):
        dataset = replace_two_electron(handle, shape=values.shape, dtype="f8", chunks=(1, 2, 2, 2))
        dataset[0] = values[0]  # the chunk of index 1 is never written

    edited(path, edit)
    unreadable_with(runner, path, "/two_electron", "in 2 chunks but stores 1")


@pytest.mark.slow
def test_a_contiguous_array_whose_storage_was_never_allocated_is_refused(runner, good):
    path, tree = good
    edited(path, lambda h: replace_two_electron(h, shape=np.shape(tree["two_electron"]["array"]), dtype="f8"))
    unreadable_with(runner, path, "/two_electron", "declares 128 B but stores 0 B")


def test_a_fully_written_compressed_array_that_stores_less_than_it_declares_is_read(good):
    path, _ = good
    values = np.zeros((6, 6, 6, 6))  # compresses to a few hundred bytes

    def edit(handle):
        handle["orbitals"].attrs["count"] = 6
        del handle["orbitals/irreps"]
        del handle["references"]
        del handle["one_electron"]
        handle.create_dataset("one_electron", data=np.eye(6))
        dataset = replace_two_electron(handle, data=values, chunks=(1, 6, 6, 6), compression="gzip")
        assert dataset.id.get_storage_size() < values.nbytes

    edited(path, edit)
    assert load(path).two_electron.array.shape == (6, 6, 6, 6)


# ------------------------------------------------------------------ damaged metadata


@pytest.mark.slow
def test_an_attribute_that_is_not_utf8_is_refused_naming_it(runner, good):
    path, _ = good
    edited(path, lambda h: h.attrs.__setitem__("title", np.bytes_(b"caf\xe9 \xff")))
    unreadable_with(runner, path, "/@title", "not UTF-8")


@pytest.mark.parametrize("error", [KeyError, RuntimeError, OSError, ValueError, TypeError])
def test_an_h5py_error_during_the_walk_names_the_file_and_the_location(good, monkeypatch, error):
    path, _ = good
    real = h5py.Group.get

    def failing(self, name, *args, **kwargs):
        if name == "electrons" and not kwargs.get("getlink"):
            raise error("incorrect metadata checksum after all read attempts")
        return real(self, name, *args, **kwargs)

    monkeypatch.setattr(h5py.Group, "get", failing)
    with pytest.raises(ContainerError) as caught:
        load(path)
    message = str(caught.value)
    assert message.startswith(f"{path}: /electrons: damaged HDF5 metadata ({error.__name__}")
    assert check(path).status == "unreadable"


# ------------------------------------------------------------------ memory of the passes over the data


@pytest.mark.parametrize(
    ("shape", "budget"), [((5, 5, 5, 5), 64), ((5, 5, 5, 5), 8), ((3, 4), 1000), ((7, 2, 3), 40), ((4,), 1)]
)
def test_blocks_cover_the_array_once_in_c_order_within_the_budget(shape, budget):
    seen = np.zeros(shape, dtype=int)
    order = []
    for key, origin in blocks(shape, 8, budget):
        part = seen[key]
        assert part.size * 8 <= max(budget, 8)
        part += 1
        order.append(origin)
    assert (seen == 1).all()
    assert order == sorted(order)


def test_the_finite_check_reads_no_block_larger_than_its_budget_and_finds_the_first_bad_value(rng):
    values = rng.standard_normal((6, 6, 6, 6))
    values[3, 1, 4, 2] = np.nan
    values[5, 0, 0, 1] = np.inf
    array = MeteredArray(values)
    first, count = _first_non_finite(array, 6 * 6 * 8)  # one (r, s) plane; a row of p is 6^3 values
    assert (first, count) == ((3, 1, 4, 2), 2)
    assert max(array.reads) <= 6 * 6 * 8


def test_a_failing_fingerprint_at_the_end_of_a_run_is_a_finding(good, monkeypatch):
    path, _ = good

    def broken(ham):
        raise OSError("Can't read data (inflate() failed)")

    monkeypatch.setattr("integrity.checks.runner.fingerprint", broken)
    report = check(path, only=("arrays.shape",))
    assert report.status == "fail"
    failed = [r for r in report.results if r.status == "fail"]
    assert [r.id for r in failed] == ["checksum"] and "inflate() failed" in failed[0].message


@pytest.mark.slow
def test_one_bad_file_in_a_folder_leaves_the_reports_of_the_others(runner, good, tmp_path):
    path, _ = good
    folder = tmp_path / "batch"
    folder.mkdir()
    intact = folder / "a.h5"
    intact.write_bytes(path.read_bytes())
    looped = folder / "b.h5"
    looped.write_bytes(path.read_bytes())
    edited(looped, lambda h: h["provenance"].__setitem__("loop", h["/"]))
    reports = {r["path"]: r for r in checked(runner, folder)}
    assert reports[str(looped)]["status"] == "unreadable"
    assert reports[str(intact)]["status"] in ("pass", "fail")
    assert reports[str(intact)]["checks"], "the intact file was judged"


def test_an_array_replaced_by_a_soft_link_to_nowhere_is_unreadable_naming_the_link(runner, good):
    path, _ = good

    def edit(handle):
        del handle["one_electron"]
        handle["one_electron"] = h5py.SoftLink("/moved/one_electron")

    edited(path, edit)
    (report,) = checked(runner, path)
    assert report["status"] == "unreadable"
    assert "/one_electron: a soft link to /moved/one_electron, which does not exist" in report["error"]
    assert "/one_electron" in one_error_line(runner, ["show", str(path)])


@pytest.mark.slow
@pytest.mark.parametrize("value", [np.nan, np.inf])
def test_a_non_finite_attribute_is_a_schema_finding_naming_it(runner, good, value):
    path, _ = good
    edited(path, lambda h: h["references/hf"].attrs.__setitem__("energy", value))
    (report,) = checked(runner, path)
    schema = next(c for c in report["checks"] if c["id"] == "schema")
    assert schema["status"] == "fail" and schema["where"]["field"] == "/references/hf@energy"
    assert "/references/hf@energy" in one_error_line(runner, ["show", str(path)])
