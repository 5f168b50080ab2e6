"""Commands and messages: numbers refused at the door, one line per error, escaped text, JSON without NaN,
exit statuses for bugs and interruptions, no library warnings in our output."""

from __future__ import annotations

import json
import math
import shutil
import warnings

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from locations import DAMAGED, GOOD

from integrity.cli import main
from integrity.cli.options import EXIT_INTERRUPTED, EXIT_TERMINATED, Terminated
from integrity.cli.render import as_json, finite_json, one_line, printable
from integrity.io import load, parse_bytes, save

LIH = str(GOOD / "lih_sto3g.h5")


def _one_error_line(result, *words):
    """The result is exit 2 with exactly one line on stderr, starting 'error: ' and containing ``words``."""
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("error: ")
    for word in words:
        assert word in lines[0], lines[0]
    assert result.stdout == ""


@pytest.mark.parametrize(
    "args",
    [
        ["check", LIH, "--tolerance", "energy.hf=inf"],
        ["check", LIH, "--tolerance", "energy.hf=1e400"],
        ["check", LIH, "--tolerance", "energy.hf=nan"],
        ["check", LIH, "--tolerance", "energy.hf=-1"],
        ["check", LIH, "--tolerance", "two_electron.positive=1e-3"],
        ["check", LIH, "--tolerance", "schema=1"],
        ["check", LIH, "--memory", "inf"],
        ["check", LIH, "--memory", "1e400"],
        ["check", LIH, "--memory", "nan"],
        ["check", LIH, "--memory", "0.5"],
        ["check", LIH, "--memory", "-4GiB"],
        ["show", LIH, "--memory", "inf"],
        ["solve", LIH, "--memory", "1e400"],
        ["diagnose", LIH, "--expected", "nan"],
        ["diagnose", LIH, "--expected", "inf"],
        ["diagnose", LIH, "--reference", "fci", "--tolerance", "0"],
        ["diagnose", LIH, "--reference", "fci", "--tolerance", "-1e-6"],
        ["diagnose", LIH, "--reference", "fci", "--tolerance", "1e400"],
        ["convert", LIH, "out.json", "--tolerance", "inf"],
        ["convert", LIH, "out.json", "--tolerance", "-1"],
        ["convert", LIH, "out.json", "--memory", "inf"],
        ["compare", LIH, LIH, "--tolerance", "inf"],
        ["compare", LIH, LIH, "--tolerance", "0"],
    ],
    ids=lambda args: " ".join(args[2:]) + f" ({args[0]})",
)
def test_a_nonsensical_number_is_one_usage_line_naming_the_option(runner, in_tmp, args):
    option = [a for a in args if a.startswith("--")][-1]
    _one_error_line(runner.invoke(main, args), option)
    assert not (in_tmp / "out.json").exists()


def test_wrap_refuses_a_non_finite_core_energy(runner, in_tmp, rng):
    np.savez("ints.npz", one_electron=np.eye(2), two_electron=np.zeros((2, 2, 2, 2)))
    args = ["wrap", "ints.npz", "o.h5", "--notation", "chemist", "--alpha", "1", "--beta", "1", "--basis", "restricted"]
    _one_error_line(runner.invoke(main, [*args, "--core-energy", "nan"]), "--core-energy")
    assert not (in_tmp / "o.h5").exists()


@pytest.mark.slow
def test_a_limit_on_the_documented_side_of_zero_is_used_as_given(runner):
    result = runner.invoke(
        main, ["check", LIH, "--only", "two_electron.positive", "--tolerance", "two_electron.positive=-1e-3"]
    )
    assert result.exit_code == 0, result.output
    report = json.loads(
        runner.invoke(
            main,
            [
                "check",
                LIH,
                "--only",
                "two_electron.positive",
                "--tolerance",
                "two_electron.positive=-1e-3",
                "--format",
                "json",
            ],
        ).stdout
    )
    assert report["files"][0]["checks"][0]["limit"] == -1e-3
    assert report["files"][0]["checks"][0]["fails_when"] == "below"


@pytest.mark.parametrize("text", ["inf", "1e400", "nan", "0.5", "-1", "0", "0.4B", "lots"])
def test_parse_bytes_refuses_what_is_not_a_size_of_at_least_one_byte(text):
    with pytest.raises(ValueError, match="memory size"):
        parse_bytes(text)


@given(st.floats(min_value=1, max_value=1e15, allow_nan=False), st.sampled_from(["", "KiB", "MB", "GiB"]))
def test_parse_bytes_gives_a_positive_whole_number_for_every_finite_size(value, unit):
    size = parse_bytes(f"{value!r}{unit}")
    assert isinstance(size, int) and size >= 1


# ------------------------------------------------------------------ JSON: finite or null

NESTED = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=5),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=4), inner, max_size=4),
    max_leaves=20,
)


@given(NESTED)
def test_every_document_printed_as_json_is_strict_json_with_non_finite_numbers_as_null(document):
    text = as_json(document)

    def refuse(constant):
        raise AssertionError(f"{constant} in the JSON text")

    again = json.loads(text, parse_constant=refuse)
    assert again == finite_json(document)


def _refuse_constants(text):
    def refuse(constant):
        raise AssertionError(f"{constant} in the JSON text")

    return json.loads(text, parse_constant=refuse)


def test_show_and_check_of_a_file_holding_nan_print_strict_json(runner):
    nan_file = str(DAMAGED / "hubbard_ring6_nan.h5")
    shown = _refuse_constants(runner.invoke(main, ["show", nan_file, "--format", "json"]).stdout)
    assert shown["two_electron"]["norm (dense)"] is None
    checked = runner.invoke(main, ["check", nan_file, "--format", "json"])
    assert checked.exit_code == 1
    _refuse_constants(checked.stdout)


# ------------------------------------------------------------------ printed text


def test_printable_escapes_controls_format_characters_and_surrogates_and_keeps_letters():
    assert printable("a\nb\tc\x1b[31m") == "a\\nb\\tc\\x1b[31m"
    assert printable("\u202eevil") == "\\u202eevil"
    assert printable("bad\udcff") == "bad\\udcff"
    assert printable("Ångström αβ 水") == "Ångström αβ 水"
    assert one_line("first\n  second\r\nthird") == "first second third"


@given(st.text())
def test_printable_text_is_one_line_that_utf8_can_encode(text):
    shown = printable(text)
    assert "\n" not in shown and "\r" not in shown
    shown.encode("utf-8")  # no lone surrogate left
    if text.isprintable():
        assert shown == text


def test_a_newline_in_a_file_name_does_not_split_its_report_line(runner, in_tmp):
    shutil.copy(GOOD / "water_sto3g.json", in_tmp / "new\nline.json")
    result = runner.invoke(main, ["check", "new\nline.json", "--only", "schema"])
    assert result.exit_code == 0
    assert result.stdout == "new\\nline.json: pass (1 check)\n"


def test_a_title_with_a_lone_surrogate_is_refused_by_every_command_in_one_line(runner, in_tmp):
    document = json.loads((GOOD / "water_sto3g.json").read_text())
    document["title"] = "water \udcff"
    del document["checksum"]
    (in_tmp / "bad.json").write_text(json.dumps(document))  # ensure_ascii writes the surrogate as \udcff
    checked = runner.invoke(main, ["check", "bad.json"])
    assert checked.exit_code == 1
    assert "title: contains the lone surrogate '\\udcff'" in checked.stdout
    for args in (["show", "bad.json"], ["convert", "bad.json", "out.h5"], ["solve", "bad.json"]):
        _one_error_line(runner.invoke(main, args), "bad.json: title", "lone surrogate")
    assert not (in_tmp / "out.h5").exists()


def test_control_and_right_to_left_characters_in_a_title_are_shown_escaped(runner, in_tmp):
    ham = load(GOOD / "water_sto3g.json")
    save(ham.replace(title="water\n\u202eevil", checksum=None), "odd.h5")
    result = runner.invoke(main, ["show", "odd.h5"])
    assert result.exit_code == 0
    assert "  title        water\\n\\u202eevil\n" in result.stdout


# ------------------------------------------------------------------ exit statuses


def _raising(error):
    def function(*args, **kwargs):
        raise error

    return function


def test_an_unexpected_exception_is_one_line_and_exit_two_never_one(runner, monkeypatch):
    monkeypatch.setattr("integrity.model.summarize", _raising(RuntimeError("a\nmulti-line\nfault")))
    result = runner.invoke(main, ["show", LIH])
    _one_error_line(result, "internal error (RuntimeError: a multi-line fault)", "--debug")


def test_an_unexpected_exception_while_options_are_converted_is_one_line_too(runner, monkeypatch):
    monkeypatch.setattr("integrity.cli.options.parse_bytes", _raising(OverflowError("too big")))
    _one_error_line(runner.invoke(main, ["check", LIH, "--memory", "9GiB"]), "OverflowError: too big")


@pytest.mark.parametrize(
    ("error", "status", "word"),
    [(KeyboardInterrupt(), EXIT_INTERRUPTED, "interrupted"), (Terminated(), EXIT_TERMINATED, "terminated")],
)
def test_an_interruption_exits_130_or_143_without_aborted(runner, monkeypatch, error, status, word):
    monkeypatch.setattr("integrity.model.summarize", _raising(error))
    result = runner.invoke(main, ["show", LIH])
    assert result.exit_code == status
    assert result.stderr == f"{word}\n"
    assert "Aborted" not in result.output


def test_library_warnings_do_not_reach_the_output(runner, monkeypatch):
    from integrity.model import summarize

    def noisy(ham):
        warnings.warn("Basis may be available in basis-set-exchange.\n  warnings.warn(", UserWarning, stacklevel=1)
        return summarize(ham)

    monkeypatch.setattr("integrity.model.summarize", noisy)
    result = runner.invoke(main, ["show", LIH])
    assert result.exit_code == 0
    assert "Warning" not in result.output and "basis-set-exchange" not in result.output


def test_a_usage_error_is_one_line_naming_the_command_help(runner):
    result = runner.invoke(main, ["solve", LIH, "--alpha", "1"])
    _one_error_line(result, "give both --alpha and --beta", "'main solve --help'")


# ------------------------------------------------------------------ words


@pytest.mark.slow
def test_one_check_and_one_warning_are_singular(runner, in_tmp):
    save(load(GOOD / "water_sto3g.json"), "w.json")
    assert runner.invoke(main, ["check", "w.json", "--only", "schema"]).stdout.endswith("pass (1 check)\n")
    document = json.loads((in_tmp / "w.json").read_text())
    del document["checksum"]
    (in_tmp / "bare.json").write_text(json.dumps(document))
    result = runner.invoke(main, ["check", "bare.json", "--only", "checksum", "--only", "schema"])
    assert result.stdout.endswith("pass (2 checks, 1 warning: checksum)\n")


def test_sizes_in_a_memory_refusal_are_humanized(runner):
    result = runner.invoke(main, ["solve", str(GOOD / "n2_ccpvdz_cas66.h5"), "--memory", "64KiB"])
    _one_error_line(result, "--memory")
    assert "MiB" in result.stderr or "KiB" in result.stderr
    assert not any(len(word) > 9 and word.replace(".", "").isdigit() for word in result.stderr.split())


@pytest.mark.slow
def test_json_null_is_printed_as_null_and_no_none_reaches_the_text(runner):
    finding = runner.invoke(main, ["diagnose", str(GOOD / "lih_sto3g.h5"), "--expected", "-7.5"])
    assert finding.exit_code == 1
    assert "None" not in finding.stdout
    as_json_text = runner.invoke(
        main, ["diagnose", str(GOOD / "lih_sto3g.h5"), "--expected", "-7.5", "--format", "json"]
    )
    assert "null" in as_json_text.stdout and "None" not in as_json_text.stdout
    assert not math.isnan(json.loads(as_json_text.stdout)["expected"])


MINIMAL_ARGS = {
    "check": [LIH],
    "show": [LIH],
    "solve": [LIH],
    "diagnose": [LIH, "--reference", "fci"],
    "convert": [LIH, "out.json"],
    "wrap": ["ints.npz", "out.h5", "--notation", "chemist", "--alpha", "1", "--beta", "1", "--basis", "restricted"],
    "build": ["out.h5", "--geometry", "He 0 0 0", "--basis-set", "sto-3g"],
}


@pytest.mark.parametrize("name", sorted(MINIMAL_ARGS))
def test_every_command_turns_an_unforeseen_exception_into_one_line_and_exit_two(runner, in_tmp, monkeypatch, name):
    np.savez("ints.npz", one_electron=np.eye(2), two_electron=np.zeros((2,) * 4))
    command = main.commands[name]
    monkeypatch.setattr(command, "callback", _raising(ZeroDivisionError("deep inside")))
    _one_error_line(runner.invoke(main, [name, *MINIMAL_ARGS[name]]), "ZeroDivisionError: deep inside")
    assert not (in_tmp / "out.h5").exists() and not (in_tmp / "out.json").exists()
