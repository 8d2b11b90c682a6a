"""A sweep's folder: manifest.json, results.jsonl (one line per finished cell), certificates/.

Durability rules: a certificate is written atomically (temporary file, fsync, rename) before any
line that names it; lines are appended with one write per batch and fsync'd; a torn last line
(the process was killed mid-write) is cut off when the sweep resumes and skipped when read.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from ..errors import InputError
from .files import write_certificate

FORMAT = "certify-sweep"
VERSION = 1
RESULTS = "results.jsonl"
MANIFEST = "manifest.json"
CERTIFICATES = "certificates"


def sha256_file(path: str | Path) -> str:
    """Return the SHA-256 of a file's bytes, in hex."""
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


class SweepStore:
    """The folder of one sweep."""

    def __init__(self, folder: str | Path):
        self.folder = Path(folder)
        self.results = self.folder / RESULTS
        self.manifest_path = self.folder / MANIFEST
        self._fd = None

    def open(self, manifest: dict, resume: bool) -> set[tuple[int, ...]]:
        """Create or reopen the folder; return the cells already finished."""
        where = str(self.manifest_path)
        if resume:
            if not self.manifest_path.exists():
                raise InputError("no sweep to resume here (no manifest.json)", str(self.folder),
                                 "--resume")
            try:
                old = json.loads(self.manifest_path.read_text())
            except (OSError, ValueError) as exc:
                raise InputError(f"the manifest cannot be read ({exc})", where) from None
            if old.get("format") != FORMAT:
                raise InputError("not a sweep manifest", where, "format")
            if old.get("model_sha256") != manifest["model_sha256"]:
                raise InputError("the model file changed since the sweep started; start a new "
                                 "sweep in another folder", where, "model_sha256")
            for key, value in manifest["arguments"].items():
                if old.get("arguments", {}).get(key) != value:
                    raise InputError(f"the sweep was started with different arguments ({key}: "
                                     f"{old.get('arguments', {}).get(key)!r}, now {value!r}); "
                                     "start a new sweep in another folder", where, key)
            finished = self._recover()
        else:
            if self.results.exists() and self.results.stat().st_size:
                raise InputError("this folder already holds a sweep: add --resume to go on with "
                                 "it, or choose another folder", str(self.folder), "--out")
            try:
                self.folder.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise InputError(f"cannot create the folder ({exc.strerror})",
                                 str(self.folder), "--out") from None
            write_certificate(manifest, self.manifest_path)
            self.results.write_bytes(b"")
            finished = set()
        (self.folder / CERTIFICATES).mkdir(exist_ok=True)
        self._fd = os.open(self.results, os.O_WRONLY | os.O_APPEND)
        return finished

    def _recover(self) -> set[tuple[int, ...]]:
        """Cut a torn last line; return the cells of the complete lines."""
        data = self.results.read_bytes() if self.results.exists() else b""
        keep = data.rfind(b"\n") + 1
        if keep != len(data):
            with open(self.results, "r+b") as fh:
                fh.truncate(keep)
                fh.flush()
                os.fsync(fh.fileno())
        finished = set()
        for line in data[:keep].splitlines():
            finished.add(tuple(json.loads(line)["cell"]))
        return finished

    def certificate(self, name: str, cert: dict) -> str:
        """Write a certificate atomically; return its path relative to the folder."""

        rel = f"{CERTIFICATES}/{name}.cert.json"
        write_certificate(cert, self.folder / rel)
        return rel

    def append(self, records: list[dict]) -> None:
        """Append finished cells, one JSON line each, in one write, then fsync."""
        if not records:
            return
        data = "".join(json.dumps(r, separators=(",", ":")) + "\n" for r in records)
        view = memoryview(data.encode())
        while view:
            written = os.write(self._fd, view)
            view = view[written:]
        os.fsync(self._fd)

    def close(self) -> None:
        """Close the results file."""
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None


def read_results(folder: str | Path):
    """Yield the finished cells of a sweep folder (a torn last line is skipped)."""
    path = Path(folder) / RESULTS
    with open(path, "rb") as fh:
        for line in fh:
            if not line.endswith(b"\n"):
                return
            yield json.loads(line)


def read_manifest(folder: str | Path) -> dict:
    """Return a sweep folder's manifest."""
    return json.loads((Path(folder) / MANIFEST).read_text())
