"""Ctrl-C during ``gapmatch optimise`` keeps the completed trials and prints the command
that resumes the study; running that command continues the same study."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import optuna
import pytest

ROOT = Path(__file__).resolve().parents[1]

# 6.2 s: the test starts the CLI twice and waits for trials before interrupting it
pytestmark = pytest.mark.slow


def _complete(db: Path, name: str) -> int:
    try:
        st = optuna.load_study(study_name=name, storage=f"sqlite:///{db}")
    except Exception:  # noqa: BLE001 - the study may not exist yet
        return 0
    return sum(t.state == optuna.trial.TrialState.COMPLETE for t in st.trials)


def test_ctrl_c_keeps_trials_and_prints_resume(tmp_path):
    db = tmp_path / "ctrlc.db"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    cmd = [
        sys.executable,
        "-m",
        "gapmatch",
        "optimise",
        "--junctions",
        "2",
        "--trials",
        "100000",
        "--storage",
        str(db),
        "--search-name",
        "ctrlc",
        "--no-progress",
    ]
    proc = subprocess.Popen(cmd, cwd=tmp_path, env=env, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while _complete(db, "ctrlc") < 5 and time.monotonic() < deadline:
            time.sleep(0.3)
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, err[-3000:]
    assert "Resume with" in err and "--search-name ctrlc" in err and "Traceback" not in err
    kept = _complete(db, "ctrlc")
    assert kept >= 5
    # the printed command, with a reachable trial count, resumes the same study
    resume = [
        sys.executable,
        "-m",
        "gapmatch",
        "optimise",
        "--junctions",
        "2",
        "--trials",
        str(kept + 3),
        "--storage",
        str(db),
        "--search-name",
        "ctrlc",
        "--no-progress",
        "--json",
    ]
    out = subprocess.run(resume, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert "(resumed)" in out.stderr and '"efficiency"' in out.stdout
