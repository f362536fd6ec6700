"""Writing OUT safely, and checking it later.

* :class:`Staging` writes every output into a hidden sibling folder and moves it into place only
  when the run is complete; a lock stops two runs writing the same OUT at once. A run killed at
  any point leaves the previous complete OUT or the new one, never a mix (on Linux the two are
  exchanged in one step; elsewhere a kill between two renames can leave no OUT, and the next run
  puts the previous one back). OUT is replaced only if it is absent, empty or a reportgen output
  folder, so ``-o`` naming the round folder or a home folder cannot delete it.
* :func:`manifest` records the SHA-256 of every input, the settings and every output, with the
  software versions; :func:`verify` recomputes them and names what changed.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import fcntl
import hashlib
import json
import os
import platform
import shutil
import sys
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path
from types import TracebackType

from reportgen.errors import OutputError

MANIFEST = "manifest.json"
MANIFEST_SIGNATURE = "manifest.json.p7s"  # the manifest's detached signature (docs/signing.md)
MANIFEST_FORMAT = "reportgen-manifest/1"
_PACKAGES = ("reportgen", "numpy", "scipy", "pydantic", "openpyxl", "python-calamine",
             "defusedxml", "jinja2", "weasyprint", "altair", "vl-convert-python", "pyhanko",
             "cryptography")


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def sha256_file(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


def write_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` under a temporary name in the same folder, flush it, then rename."""
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.part")
    with tmp.open("wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


def software_versions() -> dict[str, str]:
    versions = {"python": platform.python_version()}
    for name in _PACKAGES:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


class Staging:
    """Context manager: a locked staging folder that replaces OUT on success.

    ``with Staging(out) as stage: stage.write("results.json", data)``; on an exception the staging
    folder is removed and OUT is left as it was.
    """

    def __init__(self, out: Path) -> None:
        self.out = out.resolve()
        self.parent = self.out.parent
        self.stage = self.parent / f".{self.out.name}.staging"
        self.old = self.parent / f".{self.out.name}.previous"
        self.lock_path = self.parent / f".{self.out.name}.lock"
        self.written: dict[str, str] = {}
        self._lock_fh: int | None = None

    def __enter__(self) -> Staging:
        if self.out.exists() and not self.out.is_dir():
            raise OutputError(f"{self.out} exists and is not a folder")
        _refuse_foreign(self.out)  # before the lock file is made beside it; again under the lock
        self._lock_fh = self._lock()
        try:
            self._recover()
            _refuse_foreign(self.out)
            shutil.rmtree(self.stage, ignore_errors=True)
            self.stage.mkdir()
        except BaseException as exc:
            self._unlock()
            if isinstance(exc, OSError):
                raise OutputError(f"cannot write in {self.parent}: {exc.strerror}") from exc
            raise
        return self

    def _recover(self) -> None:
        """Finish or undo what a killed run left (we hold the lock, so nobody else is writing)."""
        if self.old.exists():
            if self.out.exists():
                shutil.rmtree(self.old)
            else:  # killed between the two renames: the previous output is the complete one
                os.replace(self.old, self.out)

    def write(self, name: str, data: bytes) -> None:
        write_atomic(self.stage / name, data)
        self.written[name] = sha256_bytes(data)

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None:
        try:
            if exc_type is None:
                self._commit()
            else:
                shutil.rmtree(self.stage, ignore_errors=True)
        finally:
            self._unlock()

    def _lock(self) -> int:
        """Create and lock ``.OUT.lock`` beside OUT. The file is removed again on unlock, so a
        lock taken on a file that another run has just removed is dropped and taken anew."""
        for _ in range(100):
            try:
                self.parent.mkdir(parents=True, exist_ok=True)
                fd = os.open(self.lock_path, os.O_RDWR | os.O_CREAT, 0o644)
            except OSError as exc:
                raise OutputError(f"cannot write in {self.parent}: {exc.strerror}") from exc
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError as exc:
                os.close(fd)
                raise OutputError(
                    f"another reportgen run is writing {self.out} right now; wait for it to "
                    "finish") from exc
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(self.lock_path))
            except FileNotFoundError:
                same = False
            if same:
                return fd
            os.close(fd)  # the file was removed by a run that just finished: lock the new one
        raise OutputError(f"cannot lock {self.lock_path}: it keeps being replaced")

    def _unlock(self) -> None:
        """Remove the lock file (while still holding the lock), then release it."""
        if self._lock_fh is not None:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(self.lock_path)
            fcntl.flock(self._lock_fh, fcntl.LOCK_UN)
            os.close(self._lock_fh)
            self._lock_fh = None

    def _commit(self) -> None:
        _fsync_dir(self.stage)
        if self.out.exists() and _exchange(self.stage, self.out):
            _fsync_dir(self.parent)  # OUT is the new output; the stage holds the previous one
            shutil.rmtree(self.stage, ignore_errors=True)
            return
        if self.out.exists():
            os.replace(self.out, self.old)
        os.replace(self.stage, self.out)
        _fsync_dir(self.parent)
        shutil.rmtree(self.old, ignore_errors=True)


def _refuse_foreign(out: Path) -> None:
    """OUT is replaced as a whole: refuse a folder that holds anything but a reportgen output."""
    if not out.is_dir() or not any(out.iterdir()):
        return
    try:
        doc = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
        ours = isinstance(doc, dict) and doc.get("format") == MANIFEST_FORMAT
    except (OSError, ValueError):
        ours = False
    if not ours:
        raise OutputError(
            f"{out} is not empty and is not a reportgen output folder (it has no reportgen "
            f"{MANIFEST}); reportgen replaces its output folder as a whole, so name a new or "
            "empty folder with -o")


_AT_FDCWD = -100
_RENAME_EXCHANGE = 2


def _exchange(a: Path, b: Path) -> bool:
    """Swap two existing paths in one step (Linux ``renameat2(RENAME_EXCHANGE)``); ``False``
    where the system or file system cannot, so the caller falls back to two renames."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        renameat2 = ctypes.CDLL(None, use_errno=True).renameat2
    except (AttributeError, OSError):  # a C library without renameat2 (glibc < 2.28, musl)
        return False
    if renameat2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.EPERM):
        return False
    raise OSError(code, os.strerror(code), str(b))


def _fsync_dir(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


@dataclass(frozen=True)
class ManifestInput:
    name: str
    sha256: str


def manifest(*, round_id: str, inputs: Sequence[ManifestInput], settings_source: str,
             settings_sha256: str, outputs: Mapping[str, str],
             file_names: Mapping[str, str] | None = None) -> bytes:
    """manifest.json as bytes: sorted keys and lists, so reruns give the same bytes."""
    doc = {
        "format": MANIFEST_FORMAT,
        "round": round_id,
        "software": software_versions(),
        "settings": {"source": settings_source, "sha256": settings_sha256},
        "inputs": [{"name": i.name, "sha256": i.sha256} for i in sorted(inputs,
                                                                        key=lambda i: i.name)],
        "outputs": [{"path": k, "sha256": v} for k, v in sorted(outputs.items())],
        "participant_files": dict(sorted((file_names or {}).items())),
    }
    return (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


@dataclass(frozen=True)
class Verification:
    altered: tuple[str, ...]
    missing: tuple[str, ...]
    added: tuple[str, ...]
    checked: int
    signed_by: str | None = None  # one line on the manifest's signature, when there is one
    bad_signatures: tuple[tuple[str, str], ...] = ()  # (file, why its signature does not hold)

    @property
    def intact(self) -> bool:
        return not (self.altered or self.missing or self.added or self.bad_signatures)


def _files(out: Path) -> Iterator[str]:
    for path in sorted(out.rglob("*")):
        if path.is_file():
            yield path.relative_to(out).as_posix()


def recorded_outputs(out: Path) -> dict[str, str]:
    """The outputs OUT/manifest.json lists, path -> SHA-256; OutputError when there is no
    readable manifest."""
    path = out / MANIFEST
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
        return {o["path"]: o["sha256"] for o in doc["outputs"]}
    except FileNotFoundError as exc:
        raise OutputError(f"{out} has no {MANIFEST}: it is not a reportgen output folder") from exc
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise OutputError(f"{path} is not a readable reportgen manifest") from exc


def verify(out: Path) -> Verification:
    """Recompute every output's SHA-256 against OUT/manifest.json."""
    path = out / MANIFEST
    recorded = recorded_outputs(out)
    present = set(_files(out)) - {MANIFEST, MANIFEST_SIGNATURE}
    altered = tuple(sorted(n for n in recorded if n in present
                           and sha256_file(out / n) != recorded[n]))
    missing = tuple(sorted(n for n in recorded if n not in present))
    added = tuple(sorted(present - set(recorded)))
    pdfs = sorted(n for n in recorded if n in present and n.endswith(".pdf"))
    signed_by, bad = _signatures(out, path.read_bytes(), pdfs)
    return Verification(altered, missing, added, len(recorded), signed_by, bad)


def _signatures(out: Path, manifest_bytes: bytes, pdfs: Sequence[str]
                ) -> tuple[str | None, tuple[tuple[str, str], ...]]:
    """The manifest's detached signature and every PDF's signature (docs/signing.md): each must
    hold, and every PDF must be signed with the manifest's certificate. An edited file whose hash
    was updated in the manifest fails here, since the manifest's signature no longer holds."""
    sig_path = out / MANIFEST_SIGNATURE
    if not sig_path.is_file():
        signed = [n for n in pdfs if b"/ByteRange" in (out / n).read_bytes()]
        if signed:
            return None, ((MANIFEST_SIGNATURE, f"missing, though {len(signed)} PDF(s) are "
                           "signed: the manifest's signature was removed"),)
        return None, ()
    from reportgen import signing  # pyHanko loads only for a signed folder

    check = signing.verify_manifest(manifest_bytes, sig_path.read_bytes())
    bad: list[tuple[str, str]] = []
    if not check.valid:
        bad.append((MANIFEST, check.reason))
    for name in pdfs:
        pdf = signing.verify_pdf((out / name).read_bytes())
        if not pdf.valid:
            bad.append((name, pdf.reason))
        elif pdf.fingerprint != check.fingerprint:
            bad.append((name, "signed with another certificate than the manifest "
                        f"({pdf.fingerprint})"))
    return check.describe(), tuple(bad)
