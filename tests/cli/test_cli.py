"""The command line: ``show`` summarises a file; every command's help has an example."""

from __future__ import annotations

import json

import pytest
from plain_format import random_tree, recipe_fingerprint, write_plain_hdf5, write_plain_json

from integrity import __version__
from integrity.cli import main
from integrity.errors import ContainerError
from integrity.io import load, save


@pytest.fixture
def good_file(in_tmp, rng):
    """A file written with plain json (no checksum), and the tree it was written from."""
    tree = random_tree(rng, n=3, wide=False)
    write_plain_json(tree, in_tmp / "good.json")
    return in_tmp / "good.json", tree


def test_show_prints_basis_counts_notation_storage_fingerprint_and_references(runner, good_file):
    path, tree = good_file
    result = runner.invoke(main, ["show", path.name])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    out = result.stdout
    lines = out.splitlines()
    assert lines[0] == "good.json"
    assert tree["title"] in out
    irreps = " ".join(map(str, tree["orbitals"]["irreps"]))
    assert f"3 restricted, point group C2v, irreps {irreps}, canonical" in out
    assert "1 alpha, 1 beta" in out
    assert f"{tree['core_energy']:.10g} hartree" in out
    assert "(3, 3) float64" in out
    assert "chemist dense (3, 3, 3, 3) float64, coulomb" in out
    assert f"{recipe_fingerprint(path)} (no checksum stored)" in out
    for ref in tree["references"]:
        assert f"{ref['label']}: {ref['method']} {ref['energy']:.10f} hartree" in out
    assert "two_s 1, irrep 0, root 0, electrons 1,0" in out


def test_show_tells_whether_the_stored_checksum_matches(runner, in_tmp, rng):
    tree = random_tree(rng, wide=False)
    write_plain_json(tree, in_tmp / "plain.json")
    save(load("plain.json"), "with_checksum.h5")
    assert "(matches the stored checksum)" in runner.invoke(main, ["show", "with_checksum.h5"]).stdout
    tree["checksum"] = "sha256:" + "0" * 64
    write_plain_hdf5(tree, in_tmp / "stale.h5")
    result = runner.invoke(main, ["show", "stale.h5"])
    assert result.exit_code == 0
    assert f"DIFFERS from the stored checksum sha256:{'0' * 64}" in result.stdout


@pytest.mark.parametrize(
    ("options", "expected"),
    [
        ({"storage": "pairs"}, "chemist pairs (3, 3) float64"),
        ({"storage": "unique"}, "chemist unique (6,) float64"),
        ({"notation": "physicist"}, "physicist dense (2, 2, 2, 2) float64"),
        ({"basis": "unrestricted"}, "chemist dense (3, 2, 2, 2, 2) float64"),
        ({"basis": "spin-orbital", "layout": "blocked"}, "2 spin-orbital, blocked layout"),
        ({"is_complex": True}, "chemist dense (2, 2, 2, 2) complex128"),
    ],
)
def test_show_describes_every_basis_storage_and_notation(runner, in_tmp, rng, options, expected):
    write_plain_hdf5(random_tree(rng, optional=False, wide=False, **options), in_tmp / "h.h5")
    result = runner.invoke(main, ["show", "h.h5"])
    assert result.exit_code == 0, result.output
    assert expected in result.stdout
    assert "references   none" in result.stdout


def test_show_as_json_gives_the_same_facts_for_programs(runner, good_file):
    path, tree = good_file
    result = runner.invoke(main, ["show", path.name, "--format", "json"])
    assert result.exit_code == 0
    summary = json.loads(result.stdout)
    assert summary["path"] == "good.json"
    assert summary["fingerprint"] == recipe_fingerprint(path)
    assert summary["orbitals"]["count"] == 3 and summary["orbitals"]["basis"] == "restricted"
    assert summary["two_electron"]["notation"] == "chemist"
    assert summary["two_electron"]["storage"] == "dense"
    assert [r["label"] for r in summary["references"]] == ["hf", "fci"]
    assert summary["core_energy"] == tree["core_energy"]


def test_show_of_a_missing_file_is_one_line_on_stderr(runner, in_tmp):
    result = runner.invoke(main, ["show", "absent.h5"])
    assert result.exit_code == 2
    assert result.stdout == ""
    assert result.stderr == "error: absent.h5: no such file\n"


def test_debug_shows_the_error_itself_instead_of_one_line(runner, in_tmp):
    result = runner.invoke(main, ["--debug", "show", "absent.h5"])
    assert isinstance(result.exception, ContainerError)
    assert "error:" not in result.stderr


def test_the_top_level_help_shows_examples(runner):
    result = runner.invoke(main, ["--help"])
    assert result.exit_code == 0
    assert "Examples:" in result.stdout
    assert "integrity show" in result.stdout and "integrity check" in result.stdout
    for name in main.commands:
        assert name in result.stdout


@pytest.mark.parametrize("name", sorted(main.commands))
@pytest.mark.parametrize("flag", ["--help", "-h"])
def test_every_subcommand_help_shows_an_example(runner, name, flag):
    result = runner.invoke(main, [name, flag])
    assert result.exit_code == 0, result.output
    assert "Example" in result.stdout
    example_lines = [
        line.strip() for line in result.stdout.splitlines() if line.strip().startswith(f"integrity {name}")
    ]
    assert example_lines, f"no 'integrity {name} ...' example in:\n{result.stdout}"


def test_the_short_help_of_every_subcommand_is_whole(runner):
    """click cuts a docstring's first sentence at 45 characters with '...'; ours are written whole."""
    result = runner.invoke(main, ["--help"])
    listed = result.stdout.split("Commands:")[1]
    assert "..." not in listed
    for name, command in main.commands.items():
        assert command.get_short_help_str(limit=45) in listed, name


def test_the_check_list_needs_no_path(runner):
    result = runner.invoke(main, ["check", "--list"])
    assert result.exit_code == 0, result.output
    assert "two_electron.symmetry" in result.stdout and "energy.fci" in result.stdout


def test_the_version_is_printed(runner):
    result = runner.invoke(main, ["--version"])
    assert result.exit_code == 0
    assert __version__ in result.stdout


def test_an_unknown_command_is_a_usage_error(runner):
    result = runner.invoke(main, ["frobnicate"])
    assert result.exit_code == 2
    assert "frobnicate" in result.stderr
