"""One BLAS thread for the fast model in every entry point, the Python API included.

Reference outside the project: threadpoolctl's own report of the loaded BLAS libraries and their
thread counts (``threadpool_info``).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

from models.threads import THREAD_VARIABLES

_PROBE = (
    "import json, threadpoolctl; "
    "print(json.dumps([i['num_threads'] for i in threadpoolctl.threadpool_info() "
    "if i['user_api'] == 'blas']))"
)


def _blas_threads(code: str, **env) -> list[int]:
    clean = {k: v for k, v in os.environ.items() if k not in THREAD_VARIABLES}
    clean.update(env)
    out = subprocess.run(
        [sys.executable, "-c", f"{code}; {_PROBE}"],
        capture_output=True,
        text=True,
        env=clean,
        timeout=120,
        check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize(
    "code",
    [
        "import models",  # the Python API on its own
        "import numpy, scipy.linalg; import models",  # numpy loaded first (a notebook)
        "import numpy; import models; import scipy.linalg",  # a BLAS loaded after models
        "import optim.cli",  # the command line
    ],
)
def test_every_entry_point_runs_blas_on_one_thread(code):
    threads = _blas_threads(code)
    assert threads and all(n == 1 for n in threads), threads


def test_an_explicit_thread_count_in_the_environment_wins():
    assert set(_blas_threads("import numpy; import models", OPENBLAS_NUM_THREADS="2")) == {2}
