"""Write faults, as a user meets them: each ends with one clear line and no partial output."""

from __future__ import annotations

import contextlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def run_cli(*args: str, cwd: Path, env_extra: dict | None = None
            ) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env.update(env_extra or {})
    return subprocess.run([sys.executable, "-m", "generator", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=600)


def _no_temp_files(folder: Path) -> None:
    left = [p.name for p in folder.iterdir() if ".tmp" in p.name or p.suffix == ".probe"]
    assert not left, left


def _one_line(stderr: str) -> None:
    lines = [ln for ln in stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, stderr
    assert "Traceback" not in stderr


@contextlib.contextmanager
def _mount_tmpfs(where: Path, options: str):
    """A small tmpfs (root only); skip the test where mounting is not allowed."""
    where.mkdir()
    r = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(where)],
                       capture_output=True, text=True)
    if r.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {r.stderr.strip()}")
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True)


def test_read_only_folder_is_refused_up_front(tmp_path):
    if os.geteuid() == 0:
        ctx = _mount_tmpfs(tmp_path / "ro", "size=1m,ro")
    else:
        ro = tmp_path / "ro"
        ro.mkdir()
        ro.chmod(0o555)
        ctx = contextlib.nullcontext(ro)
    with ctx as folder:
        r = run_cli("generate", "-o", str(folder / "a.h5"), "--events", "1000", "--seed", "1",
                    "--quiet", cwd=tmp_path)
        assert r.returncode == 2, r.stderr
        _one_line(r.stderr)
        assert "not writable" in r.stderr and str(folder) in r.stderr
        assert not any(folder.iterdir())


def test_target_that_is_a_directory(tmp_path):
    (tmp_path / "d.h5").mkdir()
    r = run_cli("generate", "-o", "d.h5", "--events", "100", "--seed", "1", "--quiet",
                "--force", cwd=tmp_path)
    assert r.returncode == 2
    _one_line(r.stderr)
    assert "folder" in r.stderr
    _no_temp_files(tmp_path)


def test_missing_parent_folder(tmp_path):
    r = run_cli("generate", "-o", "nowhere/a.h5", "--events", "100", "--seed", "1", "--quiet",
                cwd=tmp_path)
    assert r.returncode == 2
    _one_line(r.stderr)
    assert "does not exist" in r.stderr
    assert not (tmp_path / "nowhere").exists()


def test_special_files_are_never_replaced(tmp_path):
    """`-o /dev/null --force` once replaced /dev/null with a regular file (as root)."""
    fifo = tmp_path / "pipe.h5"
    os.mkfifo(fifo)
    for target in ("/dev/null", str(fifo)):
        r = run_cli("generate", "-o", target, "--events", "100", "--seed", "1", "--quiet",
                    "--force", cwd=tmp_path)
        assert r.returncode == 2, r.stderr
        _one_line(r.stderr)
    assert Path("/dev/null").is_char_device()
    assert fifo.is_fifo()


def test_dangling_symlink_is_refused(tmp_path):
    link = tmp_path / "a.h5"
    link.symlink_to(tmp_path / "missing-target.h5")
    r = run_cli("generate", "-o", "a.h5", "--events", "100", "--seed", "1", "--quiet",
                cwd=tmp_path)
    assert r.returncode == 2
    _one_line(r.stderr)
    assert "dangling" in r.stderr
    assert link.is_symlink() and not (tmp_path / "missing-target.h5").exists()


def test_too_small_disk_is_refused_up_front(tmp_path):
    """The issue's reproduction: a 3 MB tmpfs and 10⁶ events (≈ 40 MB) is refused at once."""
    with _mount_tmpfs(tmp_path / "full", "size=3m") as folder:
        r = run_cli("generate", "-o", str(folder / "a.h5"), "--events", "1000000", "--seed",
                    "1", "--quiet", cwd=tmp_path)
        assert r.returncode == 2, r.stderr
        _one_line(r.stderr)
        assert "MB free" in r.stderr
        assert not any(folder.iterdir())


def test_enospc_while_writing_via_the_test_hook(tmp_path):
    """ENOSPC injected into HDF5's own writes (descriptor pointed at /dev/full)."""
    r = run_cli("generate", "-o", "a.h5", "--events", "300000", "--seed", "1", "--quiet",
                cwd=tmp_path, env_extra={"SUNRECOIL_TEST_ENOSPC_AFTER_CHUNKS": "1",
                                         "SUNRECOIL_CACHE": os.environ["SUNRECOIL_CACHE"]})
    assert r.returncode == 1, r.stderr
    _one_line(r.stderr)
    assert "No space left on device" in r.stderr and "a.h5" in r.stderr
    assert not (tmp_path / "a.h5").exists()
    _no_temp_files(tmp_path)


def test_full_tmpfs_while_writing(tmp_path):
    """A real 3 MB file system: the estimate lets 10⁵ events start, the disk fills up."""
    with _mount_tmpfs(tmp_path / "full", "size=3m") as folder:
        r = run_cli("generate", "-o", str(folder / "a.h5"), "--events", "100000", "--seed",
                    "1", "--quiet", cwd=tmp_path)
        assert r.returncode == 1, r.stderr
        _one_line(r.stderr)
        assert "No space left on device" in r.stderr
        assert not any(folder.iterdir())


def test_debug_switch_shows_the_traceback(tmp_path):
    r = run_cli("--debug", "generate", "-o", "a.h5", "--events", "300000", "--seed", "1",
                "--quiet", cwd=tmp_path, env_extra={"SUNRECOIL_TEST_ENOSPC_AFTER_CHUNKS": "1"})
    assert r.returncode == 1
    assert "Traceback" in r.stderr


@pytest.mark.parametrize("sig,status", [(2, 130), (15, 143)])
def test_interrupts_clean_up_and_are_never_lost(tmp_path, sig, status):
    """SIGINT/SIGTERM at several moments (tables, events, late in the write): the run ends
    with 130/143 (or, after the handlers are restored at exit, by the signal itself) and leaves
    no temporary file; a signal delivered to a live process never ends in exit status 0."""
    import signal as _signal
    import time

    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    for delay in (0.5, 2.0, 4.0, 7.0):
        out = tmp_path / f"a{delay}.h5"
        proc = subprocess.Popen([sys.executable, "-m", "generator", "generate", "-o", str(out),
                                 "--events", "1500000", "--seed", "1", "--quiet"],
                                cwd=tmp_path, env=env, stdout=subprocess.DEVNULL,
                                stderr=subprocess.PIPE, text=True)
        time.sleep(delay)
        if proc.poll() is not None:          # finished before the signal: nothing to test
            proc.communicate()                # (and close the pipe)
            assert proc.returncode == 0
            continue
        proc.send_signal(_signal.Signals(sig))
        _, err = proc.communicate(timeout=300)
        assert proc.returncode in (status, -sig), (delay, proc.returncode, err)
        if proc.returncode == status:
            _one_line(err)
        _no_temp_files(tmp_path)
        assert not out.exists() or proc.returncode == -sig
