"""Inputs absurd in size or range, each run by the installed command in its own process under an address-space
limit (resource.setrlimit) and a time limit: the expected exit status, one line on stderr, no traceback,
nothing on stdout and no output folder left behind."""
import os
import resource
import subprocess
import sys

import pytest

from tests.hostile.bounded import BOUNDED
from tests.hostile.test_subprocess import nearfar_command

#: seconds one case may take (a guard against a hang, not a speed target)
TIME_LIMIT_S = 90


def run_limited(args, env_extra: dict, memory_mb: int) -> subprocess.CompletedProcess:
    def limit_memory():
        resource.setrlimit(resource.RLIMIT_AS, (memory_mb << 20, memory_mb << 20))

    env = {k: v for k, v in os.environ.items() if not k.startswith("NEARFAR_")} | env_extra
    return subprocess.run(nearfar_command() + list(args), capture_output=True, timeout=TIME_LIMIT_S, env=env,
                          preexec_fn=limit_memory)


@pytest.mark.skipif(sys.platform != "linux", reason="address-space limits as Linux applies them")
@pytest.mark.parametrize("name", sorted(BOUNDED))
def test_ends_in_one_line_within_limits(name, tmp_path):
    case = BOUNDED[name](tmp_path)
    done = run_limited(case.args, case.env, case.memory_mb)
    err = done.stderr.decode("utf-8", errors="replace")
    assert done.returncode == case.status, err
    assert err.count("\n") == 1 and err.startswith("nearfar: error: ") and "Traceback" not in err, err
    assert case.says in err, err
    assert done.stdout == b""
    assert not (tmp_path / "out").exists()
