"""Shared helpers: the repository, the command-line binary the Python results are compared
with, and bit-level comparison of floats."""

import json
import os
import shutil
import struct
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]


def cli_binary():
    """The meshbound command built from this repository (MESHBOUND_CLI, else target/release,
    else target/debug). CI builds it before pytest and sets MESHBOUND_REQUIRE_CLI=1, so that a
    missing binary fails there instead of skipping."""
    candidates = [os.environ.get("MESHBOUND_CLI")]
    candidates += [str(REPO / "target" / k / "meshbound") for k in ("release", "debug")]
    for c in candidates:
        if c and Path(c).is_file() and os.access(c, os.X_OK):
            return c
    if os.environ.get("MESHBOUND_REQUIRE_CLI") == "1":
        pytest.fail("the meshbound command is not built (cargo build --release)")
    pytest.skip("the meshbound command is not built (cargo build --release)")


def run_cli_json(study, cwd=None):
    """`meshbound assess STUDY --format json`, parsed."""
    out = subprocess.run(
        [cli_binary(), "assess", str(study), "--format", "json"],
        capture_output=True,
        text=True,
        cwd=cwd,
    )
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


def bits(x):
    """A float's 64 bits (None stays None), for bit-for-bit comparisons."""
    if x is None:
        return None
    return struct.unpack("<Q", struct.pack("<d", float(x)))[0]


@pytest.fixture
def repo():
    return REPO
