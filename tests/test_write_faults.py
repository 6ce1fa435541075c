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
