"""The command line keeps numpy's linear-algebra library to one thread unless the user chose.

OpenBLAS starts one worker per core when numpy is imported, and after a call its workers spin
before they sleep (the library's documented thread timeout), so on a shared line PC they burn
CPU time for nothing on linewatch's small matrices and single dot products.
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

PROBE = (
    "import os, linewatch.cli.main, numpy as np\n"
    "x = np.ones(1_000_000)\n"
    "x @ x\n"
    "print(os.environ.get('OPENBLAS_NUM_THREADS'), len(os.listdir('/proc/self/task')))\n"
)


def run_probe(extra: dict[str, str]) -> list[str]:
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    env.update(extra)
    out = subprocess.run([sys.executable, "-c", PROBE], capture_output=True, text=True,
                         env=env, check=True, timeout=60)
    return out.stdout.split()


@pytest.mark.skipif(not os.path.isdir("/proc/self/task"), reason="needs Linux /proc")
def test_the_command_line_runs_numpy_on_one_thread():
    setting, threads = run_probe({})
    assert setting == "1"
    assert threads == "1"  # no BLAS worker threads beside the main one


def test_a_setting_the_user_made_is_kept():
    setting, _ = run_probe({"OPENBLAS_NUM_THREADS": "2"})
    assert setting == "2"
