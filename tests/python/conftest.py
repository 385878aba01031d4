"""Shared fixtures: the noisesonde binary under test and a runner for it."""
import json
import os
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="session")
def binary():
    path = os.environ.get("NOISESONDE_BIN")
    if not path:
        path = str(ROOT / "target" / "release" / "noisesonde")
    if not Path(path).exists():
        pytest.fail(f"noisesonde binary not found at {path}: run `cargo build --release` or `cargo xtask test`")
    return path


class Run:
    def __init__(self, proc):
        self.code = proc.returncode
        self.stdout = proc.stdout
        self.stderr = proc.stderr

    def report(self):
        assert self.code == 0, f"exit {self.code}: {self.stderr}"
        return json.loads(self.stdout)


@pytest.fixture
def noisesonde(binary):
    def run(*args):
        proc = subprocess.run([binary, "analyze", *map(str, args)], capture_output=True, text=True, timeout=300)
        return Run(proc)
    return run


@pytest.fixture
def noisesonde_command(binary):
    """Runs any subcommand: noisesonde_command("ensemble", a, b, "--json", "-")."""
    def run(*args):
        proc = subprocess.run([binary, *map(str, args)], capture_output=True, text=True, timeout=300)
        return Run(proc)
    return run
