"""Staging, locking, manifest and verify."""

from __future__ import annotations

import fcntl
import os
from pathlib import Path

import pytest

from reportgen.errors import OutputError
from reportgen.output import Staging, manifest, sha256_bytes, verify


def _write_out(out: Path, files: dict[str, bytes]) -> None:
    with Staging(out) as stage:
        for name, data in files.items():
            stage.write(name, data)
        stage.write("manifest.json", manifest(round_id="R", inputs=[], settings_source="x",
                                              settings_sha256="0", outputs=stage.written))


def test_staging_replaces_out_only_when_complete(tmp_path: Path) -> None:
    out = tmp_path / "out"
    _write_out(out, {"a.txt": b"first"})
    def interrupted() -> None:
        with Staging(out) as stage:
            stage.write("a.txt", b"second")
            raise RuntimeError("killed half-way")

    with pytest.raises(RuntimeError):
        interrupted()
    assert (out / "a.txt").read_bytes() == b"first"  # the previous complete output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_recovers_when_killed_between_renames(tmp_path: Path) -> None:
    out = tmp_path / "out"
    _write_out(out, {"a.txt": b"first"})
    os.replace(out, tmp_path / ".out.previous")  # as if killed right after the first rename
    _write_out(out, {"a.txt": b"second"})
    assert (out / "a.txt").read_bytes() == b"second"
    assert not (tmp_path / ".out.previous").exists()


def test_second_writer_is_refused(tmp_path: Path) -> None:
    out = tmp_path / "out"
    fd = os.open(tmp_path / ".out.lock", os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    try:
        with pytest.raises(OutputError, match="another reportgen run is writing"), Staging(out):
            pass
    finally:
        os.close(fd)


def test_verify_names_altered_missing_and_added(tmp_path: Path) -> None:
    out = tmp_path / "out"
    _write_out(out, {"a.txt": b"alpha", "sub/b.txt": b"beta", "c.txt": b"gamma"})
    assert verify(out).intact
    data = bytearray((out / "a.txt").read_bytes())
    data[0] ^= 1  # one changed bit
    (out / "a.txt").write_bytes(bytes(data))
    (out / "c.txt").unlink()
    (out / "extra.txt").write_bytes(b"?")
    v = verify(out)
    assert (v.altered, v.missing, v.added) == (("a.txt",), ("c.txt",), ("extra.txt",))


def test_manifest_records_hashes(tmp_path: Path) -> None:
    out = tmp_path / "out"
    _write_out(out, {"a.txt": b"alpha"})
    import json

    doc = json.loads((out / "manifest.json").read_text())
    assert doc["outputs"] == [{"path": "a.txt", "sha256": sha256_bytes(b"alpha")}]
    assert doc["software"]["numpy"]
