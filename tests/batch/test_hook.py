"""The pre-commit hook, run by the real pre-commit in a temporary git repository.

The hook repository is a snapshot of this checkout (its tracked and untracked
files, committed in a temporary repository), so the test exercises the
working tree's ``.pre-commit-hooks.yaml`` and code. pre-commit installs the
hook's environment from that snapshot with pip, into a temporary
``PRE_COMMIT_HOME``; the package registry (or its local mirror) provides the
dependencies.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from delivery import damage, delivery
from locations import REPOSITORY

GIT_IDENTITY = ["-c", "user.name=Quill gate test", "-c", "user.email=gate@quill.invalid", "-c", "commit.gpgsign=false"]


def git(folder, *arguments, env=None, check=True):
    return subprocess.run(
        ["git", *GIT_IDENTITY, *arguments], cwd=folder, env=env, check=check, capture_output=True, text=True
    )


def snapshot(target: Path) -> str:
    """Copy the checkout's files (tracked and untracked, not ignored) to ``target``, commit them, return the commit."""
    listed = subprocess.run(
        ["git", "ls-files", "-z", "--cached", "--others", "--exclude-standard"],
        cwd=REPOSITORY,
        check=True,
        capture_output=True,
    ).stdout.split(b"\0")
    for name in filter(None, (entry.decode() for entry in listed)):
        source = REPOSITORY / name
        if source.is_file():
            (target / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(source, target / name)
    git(target, "init", "-q")
    git(target, "add", "-A")
    git(target, "commit", "-q", "-m", "snapshot")
    return git(target, "rev-parse", "HEAD").stdout.strip()


@pytest.mark.slow
@pytest.mark.skipif(shutil.which("git") is None, reason="needs git")
def test_the_hook_admits_a_good_file_and_refuses_a_damaged_one(tmp_path):
    hooks = tmp_path / "hooks"
    hooks.mkdir()
    revision = snapshot(hooks)
    data = tmp_path / "hsc-2611"
    data.mkdir()
    git(data, "init", "-q")
    (data / ".pre-commit-config.yaml").write_text(
        f"repos:\n  - repo: {hooks}\n    rev: {revision}\n    hooks:\n      - id: hamiltonian-gate\n"
    )
    (data / "integrity.toml").write_text("jobs = 1\n[files]\nexclude = ['scratch/']\n")
    env = {**os.environ, "PRE_COMMIT_HOME": str(tmp_path / "pre-commit-home"), "PRE_COMMIT_COLOR": "never"}
    subprocess.run([sys.executable, "-m", "pre_commit", "install"], cwd=data, env=env, check=True, capture_output=True)

    good, damaged = delivery(data / "scan", 2)
    (data / "package.json").write_text(json.dumps({"name": "viewer", "version": "0.1.0"}))
    (data / "scratch").mkdir()
    (data / "scratch" / "half.json").write_text('{"format": "integrity.hamiltonian", "orb')
    os.replace(damaged, data / "later.json")
    git(data, "add", "scan", "package.json", "scratch", "integrity.toml", ".pre-commit-config.yaml")
    admitted = git(data, "commit", "-m", "scan point 0", env=env, check=False)
    assert admitted.returncode == 0, admitted.stdout + admitted.stderr
    assert "Hamiltonian files pass the integrity checks" in admitted.stdout + admitted.stderr

    damage(data / "later.json")
    os.replace(data / "later.json", damaged)
    git(data, "add", "scan")
    refused = git(data, "commit", "-m", "scan point 1", env=env, check=False)
    output = refused.stdout + refused.stderr
    assert refused.returncode != 0
    assert "two_electron.symmetry" in output and "checksum" in output
    assert "scan/scan_001.json: fail" in output
    assert git(data, "log", "--oneline").stdout.count("\n") == 1  # the damaged file was not committed
    assert git(data, "ls-files").stdout.split().count(os.path.relpath(good, data)) == 1
