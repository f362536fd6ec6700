"""Crash safety (issue 5): ``kill -9`` at any point of a run leaves OUT as the previous complete
output or the new complete one, never a mix and never a half-written file; the rerun succeeds.

OUT starts as the complete output of round v1; the killed run writes round v2 (one answer
differs, so the two outputs differ). After every kill: OUT verifies against its manifest and is
v1 or v2 as a whole; then a rerun writes v2 and leaves nothing beside OUT but its lock file.

Kills come three ways:

* at every file-system step of the writing (each mkdir, fsync, rename, exchange and unlink),
  counted in a child that kills itself just before step N;
* after random delays (several seeds) over the whole run;
* in the middle of rendering certificates (``reportgen issue``), while a second run on the same
  OUT is refused with the "another reportgen run is writing" message and exit status 2.

Runs are forked from one driver process that has imported reportgen once, so a kill point costs
a fraction of a second instead of an interpreter start.
"""

from __future__ import annotations

import json
import os
import random
import re
import shutil
import signal
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import pytest

from reportgen.cli import main
from reportgen.output import sha256_file, verify
from scripts.hostile import base, csv_text, responses_rows

pytestmark = pytest.mark.slow

SEEDS = range(8)

_DRIVER = r"""
import json, os, signal, sys, time
from reportgen import cli, output, pipeline  # noqa: F401  (imported once, before forking)
import reportgen.scoring.score, reportgen.render.results_json, reportgen.render.workbook  # noqa

STEPS = [(os, "replace"), (os, "fsync"), (os, "mkdir"), (os, "unlink"), (os, "rmdir"),
         (output, "_exchange")]


def kill_before_step(point, tally):
    count = [0]
    for owner, name in STEPS:
        real = getattr(owner, name)
        def step(*args, _real=real, **kwargs):
            count[0] += 1
            os.write(tally, b".")
            if count[0] == point:
                os.kill(os.getpid(), signal.SIGKILL)
            return _real(*args, **kwargs)
        setattr(owner, name, step)


for line in sys.stdin:
    command = json.loads(line)
    read_end, tally = os.pipe()
    start = time.monotonic()
    pid = os.fork()
    if pid == 0:
        os.close(read_end)
        quiet = os.open(os.devnull, os.O_WRONLY)
        os.dup2(quiet, 1)
        os.dup2(quiet, 2)
        kill_before_step(command.get("point") or 0, tally)
        os._exit(cli.main(command["argv"]))
    os.close(tally)
    if command.get("delay") is not None:
        time.sleep(command["delay"])
        os.kill(pid, signal.SIGKILL)  # a child that already ended is a zombie: no effect
    _, status = os.waitpid(pid, 0)
    steps = b""
    while chunk := os.read(read_end, 65536):
        steps += chunk
    os.close(read_end)
    print(json.dumps({
        "killed": os.WIFSIGNALED(status) and os.WTERMSIG(status) == signal.SIGKILL,
        "exit": os.WEXITSTATUS(status) if os.WIFEXITED(status) else None,
        "steps": len(steps), "seconds": time.monotonic() - start}), flush=True)
"""


@dataclass
class Rig:
    v1: Path
    v2: Path
    big: Path
    out: Path
    reference: Path  # a complete output of v1
    results: dict[str, str]  # sha256 of results.json -> "v1" / "v2"
    driver: subprocess.Popen[str]
    kills: int = 0
    points: list[int] = field(default_factory=list)

    def run(self, *, point: int | None = None, delay: float | None = None) -> dict[str, Any]:
        """One `reportgen score v2 -o OUT` forked by the driver, killed as asked."""
        argv = ["score", str(self.v2), "-o", str(self.out), "--quiet"]
        stdin, stdout = self.driver.stdin, self.driver.stdout
        assert stdin is not None and stdout is not None
        stdin.write(json.dumps({"argv": argv, "point": point, "delay": delay}) + "\n")
        stdin.flush()
        outcome: dict[str, Any] = json.loads(stdout.readline())
        self.kills += bool(outcome["killed"])
        return outcome

    def reset(self) -> None:
        shutil.rmtree(self.out, ignore_errors=True)
        shutil.copytree(self.reference, self.out)

    def state(self) -> str:
        """'v1' or 'v2' if OUT is that complete output; fails on anything else."""
        assert self.out.is_dir(), "OUT vanished"
        check = verify(self.out)
        assert check.intact, (check.altered, check.missing, check.added)
        return self.results[sha256_file(self.out / "provider" / "results.json")]

    def rerun_succeeds(self) -> None:
        assert main(["score", str(self.v2), "-o", str(self.out), "--quiet"]) == 0
        assert self.state() == "v2"
        assert sorted(p.name for p in self.out.parent.iterdir()) == ["out"]


def _make_rounds(root: Path) -> tuple[Path, Path, Path]:
    """v1; v2, with one answer changed; and a round of 16 participants, for a run that spends
    long enough rendering to be interrupted in the middle."""
    v1, v2, big = (root / "rounds" / name for name in ("v1", "v2", "big"))
    base(v1)
    changed = [row if row[:2] != ["C9", "0005"] else ["C9", "0005", "different", 2]
               for row in responses_rows()]
    base(v2, responses__csv=csv_text(changed))
    header, *rows = responses_rows()
    many = [header] + [[f"{code}-{n}", *rest] for n in range(4) for code, *rest in rows]
    base(big, responses__csv=csv_text(many), participants__csv=None)
    return v1, v2, big


@pytest.fixture(scope="module")
def rig(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Rig]:
    root = tmp_path_factory.mktemp("faults")
    v1, v2, big = _make_rounds(root)
    results = {}
    for name, folder in (("v1", v1), ("v2", v2)):
        ref = root / "refs" / name
        assert main(["score", str(folder), "-o", str(ref), "--quiet"]) == 0
        results[sha256_file(ref / "provider" / "results.json")] = name
    assert len(results) == 2, "the two rounds must give different results"
    (root / "work").mkdir()
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    driver = subprocess.Popen([sys.executable, "-c", _DRIVER], stdin=subprocess.PIPE,
                              stdout=subprocess.PIPE, text=True, env=env,
                              cwd=Path(__file__).parents[1])
    rig = Rig(v1, v2, big, root / "work" / "out", root / "refs" / "v1", results, driver)
    try:
        yield rig
    finally:
        assert driver.stdin is not None and driver.stdout is not None
        driver.stdin.close()
        driver.wait(timeout=60)
        driver.stdout.close()
        print(f"\n{rig.kills} runs killed with SIGKILL at {len(rig.points)} write steps, "
              f"after random delays and while rendering")


def test_kill_before_every_write_step(rig: Rig) -> None:
    rig.reset()
    dry = rig.run()
    assert dry["exit"] == 0 and rig.state() == "v2"
    assert dry["steps"] >= 10  # the staging, three files, the exchange, the clean-up
    seen = set()
    for point in range(1, dry["steps"] + 1):
        rig.reset()
        outcome = rig.run(point=point)
        assert outcome["killed"], (point, outcome)
        rig.points.append(point)
        seen.add(rig.state())
        rig.rerun_succeeds()
    assert seen == {"v1", "v2"}  # kills landed both before and after the swap


@pytest.mark.parametrize("seed", SEEDS)
def test_kill_after_a_random_delay(rig: Rig, seed: int) -> None:
    rig.reset()
    whole = rig.run()
    assert whole["exit"] == 0
    rig.reset()
    delay = random.Random(seed).uniform(0.0, whole["seconds"])
    rig.run(delay=delay)
    rig.state()
    rig.rerun_succeeds()


_PROGRESS = re.compile(r"certificates\s+\[[#.]*\]\s+(\d+)/(\d+)")


def _wait_for_rendering(stream: IO[str], deadline: float) -> None:
    """Read the progress bar until at least one certificate is rendered."""
    seen = []
    while time.monotonic() < deadline:
        line = stream.readline()
        if not line:
            break
        seen.append(line)
        match = _PROGRESS.search(line)
        if match and 1 <= int(match.group(1)) < int(match.group(2)):
            return
    pytest.fail("the run ended or stalled before rendering: " + "".join(seen)[-2000:])


def test_kill_while_rendering_and_a_second_writer_is_refused(
        rig: Rig, capsys: pytest.CaptureFixture[str]) -> None:
    rig.reset()
    argv = [sys.executable, "-m", "reportgen", "issue", str(rig.big), "-o", str(rig.out),
            "--jobs", "1"]
    with subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                          start_new_session=True) as run:
        try:
            assert run.stderr is not None
            _wait_for_rendering(run.stderr, time.monotonic() + 120)
            capsys.readouterr()
            status = main(["score", str(rig.v1), "-o", str(rig.out), "--quiet"])
            err = capsys.readouterr().err
            assert status == 2, err
            assert err == (f"error: another reportgen run is writing {rig.out.resolve()} right "
                           "now; wait for it to finish\n")
            assert run.poll() is None, "the first run ended before it could be killed"
        finally:
            os.killpg(run.pid, signal.SIGKILL)  # the run and any process it started
            run.wait(timeout=60)
    rig.kills += 1
    assert run.returncode == -signal.SIGKILL
    assert rig.state() == "v1"  # nothing of the killed run reached OUT (nor of the refused)
    rig.rerun_succeeds()
