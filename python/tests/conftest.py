"""Shared helpers of the Python tests: the repository's paths and the command line's --json.

The command line is the release binary that `cargo build --release` makes (.ci/run builds it
before these tests); KICKTURN_BIN names another one.
"""

import json
import os
import pathlib
import subprocess

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]
MEDIUM = ROOT / "problems" / "medium-2stage-leo200.json"
SMALL = ROOT / "problems" / "small-3stage-sso500.json"
GUIDED = ROOT / "problems" / "guided" / "medium-2stage-leo200-guided.json"
PROBLEMS = sorted((ROOT / "problems").glob("*.json"))


def binary() -> pathlib.Path:
    path = pathlib.Path(os.environ.get("KICKTURN_BIN", ROOT / "target" / "release" / "kickturn"))
    if not path.exists():
        pytest.fail(f"{path}: missing; build it first with `cargo build --release`")
    return path


def run_cli(*args, expect=0):
    """Runs the command line (from the repository root, so paths in messages match) and returns
    (stdout, stderr); fails unless it exits with `expect`."""
    r = subprocess.run(
        [str(binary()), *map(str, args)], cwd=ROOT, capture_output=True, text=True
    )
    assert r.returncode == expect, r.stderr
    return r.stdout, r.stderr


def cli_json(*args, expect=0):
    """The command line's `--json` document of `args`."""
    out, _ = run_cli(*args, "--json", expect=expect)
    return json.loads(out)


@pytest.fixture
def in_root(monkeypatch):
    """Runs the test from the repository root (relative problem paths as on the command line)."""
    monkeypatch.chdir(ROOT)
    return ROOT
