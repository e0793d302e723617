"""Helpers of the service tests: synthetic spectrum files and a real server in a subprocess.

The spectra are synthetic: transmittance of a film whose α follows the library's continuous
edge model with a known gap, so a fit through the service must find that gap.
"""
from __future__ import annotations

import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

from edgefit.edge.tauc import edge_model_alpha
from edgefit.optics import HC_EV_NM

DEMO_DIR = Path(__file__).resolve().parent.parent / "spectra_demo"


def synthetic_csv(eg_ev: float = 2.0, *, eu_ev: float = 0.03, thickness_nm: float = 500.0,
                  points: int = 326, noise: float = 2e-4, seed: int = 0,
                  header: str = "Wavelength (nm),%T", sample_line: str | None = None) -> bytes:
    """A %T-against-nm CSV export of a direct-gap film (synthetic truth: ``eg_ev``)."""
    wl = np.linspace(350.0, 1000.0, points)
    e = HC_EV_NM / wl
    alpha = edge_model_alpha(e, eg_ev, eu_ev, 1e5, 0.5)
    t = np.exp(-alpha * thickness_nm * 1e-7)
    t = np.clip(t + np.random.default_rng(seed).normal(0.0, noise, t.size), 1e-6, None)
    lines = [f"Sample: {sample_line}"] if sample_line else []
    lines += [header] + [f"{w:.2f},{100 * v:.4f}" for w, v in zip(wl, t)]
    return ("\n".join(lines) + "\n").encode()


class ServerProcess:
    """``python -m edgefit_web.serve`` on 127.0.0.1 with a free port, in a subprocess.

    The output is collected in a file so that the test can read what the server printed (the
    first-start token, the address) without a pipe filling up.
    """

    def __init__(self, data_dir, log_path, *, workers: int = 2, extra=()):
        self.data_dir = str(data_dir)
        self.log_path = Path(log_path)
        self.args = [sys.executable, "-m", "edgefit_web.serve", "--host", "127.0.0.1",
                     "--port", "0", "--data-dir", self.data_dir, "--workers", str(workers),
                     *extra]
        self.proc = None
        self.url = None
        self.output = ""

    def start(self, ready_s: float = 120.0) -> "ServerProcess":
        env = {**os.environ, "PYTHONUNBUFFERED": "1"}
        self._log = open(self.log_path, "ab")
        self._mark = self.log_path.stat().st_size
        self.proc = subprocess.Popen(self.args, stdout=self._log, stderr=subprocess.STDOUT,
                                     env=env)
        deadline = time.monotonic() + ready_s
        while time.monotonic() < deadline:
            text = self.read_output()
            m = re.search(r"serving on (http://127\.0\.0\.1:\d+)/api/v1", text)
            if m:
                self.url = m.group(1) + "/api/v1"
                return self
            if self.proc.poll() is not None:
                break
            time.sleep(0.1)
        self.kill()
        raise RuntimeError(f"the server did not start; it printed:\n{self.read_output()}")

    def read_output(self) -> str:
        with open(self.log_path, "rb") as fh:
            fh.seek(self._mark)
            self.output = fh.read().decode("utf-8", "replace")
        return self.output

    def first_token(self) -> str | None:
        m = re.search(r"API token: (ef_\S+)", self.read_output())
        return m.group(1) if m else None

    def terminate(self, timeout_s: float = 60.0) -> int:
        """SIGTERM and wait for the exit code."""
        self.proc.send_signal(signal.SIGTERM)
        try:
            return self.proc.wait(timeout_s)
        finally:
            self._log.close()

    def kill(self):
        if self.proc is not None and self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait(30)
        if getattr(self, "_log", None) and not self._log.closed:
            self._log.close()
