"""``generate --resume``: a run killed with SIGKILL continues to a bit-identical file.

Each kill also checks the writer's failure semantics: nothing under the final name, the
temporary file ``.NAME.tmp`` kept for ``--resume``.

Identity tests of the production machinery (no physics values): the reference is the same
command run without interruption.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

import h5py
import pytest
from test_production import assert_same_events

N_EVENTS = 400_000
CHUNK = 20_000
ARGS = ("c.toml", "--events", str(N_EVENTS), "--seed", "11", "--quiet")


def _cli(cwd: Path, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "generator", "generate", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=600)


def _progress(tmp: Path) -> int:
    try:
        with h5py.File(tmp, "r", locking=False) as f:
            return int(f.attrs.get("progress_events", 0))
    except (OSError, KeyError):
        return 0


def _run_and_kill(cwd: Path, out: str, resume: bool, at_bytes: int) -> int:
    """Start a run (or resume), SIGKILL it once its temporary file has ``at_bytes``.

    Returns the complete events recorded in the temporary file (read after the kill).
    """
    tmp = cwd / f".{out}.tmp"
    args = [*ARGS, "-o", out] + (["--resume"] if resume else [])
    with open(cwd / "stderr.txt", "wb") as err:
        proc = subprocess.Popen([sys.executable, "-m", "generator", "generate", *args],
                                cwd=cwd, stdout=subprocess.DEVNULL, stderr=err)
    try:
        deadline = time.monotonic() + 300
        while time.monotonic() < deadline:
            if tmp.exists() and tmp.stat().st_size >= at_bytes:
                break
            if proc.poll() is not None:
                pytest.fail(f"run ended before the kill: {(cwd / 'stderr.txt').read_text()}")
            time.sleep(0.02)
        else:
            pytest.fail("the run never reached the kill point")
        proc.kill()
        proc.wait(30)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait(30)
    assert proc.returncode == -9
    assert not (cwd / out).exists()
    return _progress(tmp)


def test_resume_after_sigkill_at_three_points(tmp_path: Path):
    # truth level only (fast); the response stage's counters on resume: test_production
    (tmp_path / "c.toml").write_text(
        f"[run]\nchunk_size = {CHUNK}\n[response]\nenabled = false\n")
    r = _cli(tmp_path, *ARGS, "-o", "ref.h5")
    assert r.returncode == 0, r.stderr
    size = (tmp_path / "ref.h5").stat().st_size
    seen = []
    for i, frac in enumerate((0.1, 0.4, 0.75)):
        seen.append(_run_and_kill(tmp_path, "ev.h5", resume=i > 0, at_bytes=int(frac * size)))
    assert seen == sorted(seen) and seen[-1] < N_EVENTS
    # a resume of another run (other seed) is refused and keeps the partial file
    bad = _cli(tmp_path, "c.toml", "--events", str(N_EVENTS), "--seed", "12", "--quiet",
               "-o", "ev.h5", "--resume")
    assert bad.returncode == 2 and "different run" in bad.stderr
    assert (tmp_path / ".ev.h5.tmp").exists()
    # a fresh run without --resume refuses to clobber the partial file
    fresh = _cli(tmp_path, *ARGS, "-o", "ev.h5")
    assert fresh.returncode == 2 and "--resume" in fresh.stderr
    done = _cli(tmp_path, *ARGS, "-o", "ev.h5", "--resume")
    assert done.returncode == 0, done.stderr
    assert not (tmp_path / ".ev.h5.tmp").exists()
    assert not (tmp_path / ".ev.h5.lock").exists()
    assert_same_events(tmp_path / "ev.h5", tmp_path / "ref.h5")
    with h5py.File(tmp_path / "ev.h5", "r") as f:
        assert "progress_events" not in f.attrs
        assert f.attrs["n_events"] == N_EVENTS


def test_resume_without_partial_run_exits_2(tmp_path: Path):
    r = _cli(tmp_path, "--events", "1000", "--seed", "1", "-o", "x.h5", "--resume", "--quiet")
    assert r.returncode == 2
    assert "no partial run" in r.stderr
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(("args", "message"), [
    (("--shard", "2/2"), "--shard"),
    (("--shard", "one"), "--shard"),
    (("--resume", "--force"), "give one"),
    (("--workers", "0"), "--workers"),
    (("--workers", "2", "--shard", "0/2"), "--shard/--resume"),
])
def test_bad_production_options_exit_2(tmp_path: Path, args: tuple[str, ...], message: str):
    r = _cli(tmp_path, "--events", "1000", "--seed", "1", "-o", "x.h5", "--quiet", *args)
    assert r.returncode == 2, r.stderr
    assert message in r.stderr
    assert list(tmp_path.iterdir()) == []
