"""Shared fixtures: the noisesonde binary under test and a runner for it; the WAV writer example."""
import json
import os
import subprocess
from pathlib import Path

import numpy as np
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


@pytest.fixture(scope="session")
def wav_write_tool():
    """The example program that writes WAV files with the crate's writer (examples/wav_write.rs)."""
    path = os.environ.get("NOISESONDE_WAV_WRITE")
    if not path:
        path = str(ROOT / "target" / "release" / "examples" / "wav_write")
    if not Path(path).exists():
        pytest.fail(f"wav_write example not found at {path}: run `cargo build --release --example wav_write` "
                    "or `cargo xtask test`")
    return path


@pytest.fixture
def write_wav(wav_write_tool):
    """Runs the writer on float64 samples; returns (exit code, file bytes, stderr text)."""
    def run(samples, rate, channels, encoding, ring_frames=None):
        args = [wav_write_tool, str(rate), str(channels), encoding]
        if ring_frames is not None:
            args.append(str(ring_frames))
        data = np.asarray(samples, dtype="<f8").tobytes()
        proc = subprocess.run(args, input=data, capture_output=True, timeout=120)
        return proc.returncode, proc.stdout, proc.stderr.decode()
    return run


@pytest.fixture
def noisesonde_command(binary):
    """Runs any subcommand: noisesonde_command("ensemble", a, b, "--json", "-")."""
    def run(*args):
        proc = subprocess.run([binary, *map(str, args)], capture_output=True, text=True, timeout=300)
        return Run(proc)
    return run
