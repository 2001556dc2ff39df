"""A killed update leaves the run it started from untouched and no new run folder.

Real processes, a real SIGKILL and the real file system, bounded in time
(CHECKS.md, "Files"). The child announces where it is through the update's
progress messages and waits there, so the kill lands at a known moment: in
the middle of the stages, and after the new folder's files were written but
before it is put in place. Table: scikit-learn's bundled breast cancer.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from update_fixtures import open_table, pipeline

import curate

CHILD = """
import json, sys, time
import curate.api
from curate.api import update

args = json.loads(sys.argv[1])
if args["wait_at"] == "writing":
    keep = curate.api.write_state

    def slow(result, folder):
        keep(result, folder)
        print("files written", flush=True)
        time.sleep(60)

    curate.api.write_state = slow

def say(message):
    print(message, flush=True)
    if message.startswith(args["wait_at"]):
        time.sleep(60)

update(args["pipeline"], base=args["base"], run=args["run"], new=args["new"], out=args["out"],
       progress=say)
"""
LIMIT = 120  # seconds: start-up and the first stages take a few


def _fingerprint(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _kill_when(child: subprocess.Popen[str], marker: str) -> list[str]:
    """Read the child's lines until ``marker`` starts one, then kill it; return the lines."""
    seen: list[str] = []
    deadline = time.monotonic() + LIMIT
    assert child.stdout is not None
    while time.monotonic() < deadline:
        line = child.stdout.readline()
        if not line:
            break
        seen.append(line.strip())
        if line.startswith(marker):
            os.kill(child.pid, signal.SIGKILL)
            break
    else:
        child.kill()
    child.wait(timeout=LIMIT)
    return seen


@pytest.mark.parametrize("wait_at", ["stage 2/", "files written"])
def test_killed_update_changes_nothing(tmp_path: Path, wait_at: str) -> None:
    """SIGKILL during the stages, or just before the new folder is put in place."""
    table = open_table("breast_cancer", flip=0.05, seed=51)
    pipe = pipeline([{"method": "exact-duplicates"}, {"method": "enn", "max_removed_share": 0.9},
                     {"method": "fcnn", "max_removed_share": 0.99}])
    table.head(450).write_csv(tmp_path / "part0.csv")
    table.slice(450).write_csv(tmp_path / "part1.csv")
    curate.run(pipe, base=tmp_path, out=tmp_path / "run0")
    before = _fingerprint(tmp_path / "run0")
    args = {"pipeline": pipe, "base": str(tmp_path), "run": str(tmp_path / "run0"),
            "new": str(tmp_path / "part1.csv"), "out": str(tmp_path / "run1"),
            "wait_at": "writing" if wait_at == "files written" else wait_at}
    with subprocess.Popen([sys.executable, "-c", CHILD, json.dumps(args)],
                          stdout=subprocess.PIPE, text=True, cwd=tmp_path) as child:
        seen = _kill_when(child, wait_at)
    assert any(line.startswith(wait_at) for line in seen), seen
    assert child.returncode == -signal.SIGKILL
    assert _fingerprint(tmp_path / "run0") == before
    assert not (tmp_path / "run1").exists()
    visible = sorted(p.name for p in tmp_path.iterdir() if not p.name.startswith("."))
    assert visible == ["part0.csv", "part1.csv", "run0"]
