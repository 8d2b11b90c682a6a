"""Files the tool writes: atomically, with the usual permissions, through symbolic links."""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path


def json_bytes(doc: dict) -> bytes:
    """Return a JSON document as the tool writes it (certificates, manifests, gate.json)."""
    return (json.dumps(doc, indent=1) + "\n").encode()


def write_certificate(cert: dict, path: str | Path) -> None:
    """Write a certificate atomically (see write_atomic)."""
    write_atomic(path, json_bytes(cert))


def write_atomic(path: str | Path, data: bytes) -> None:
    """Write a file atomically: a temporary file beside it, fsync, then a rename.

    A symbolic link is followed (the file it names is replaced, the link stays), and the new
    file gets the usual permissions: those of the file it replaces, else 0666 less the umask.
    """
    target = Path(path).resolve()
    try:
        mode = target.stat().st_mode & 0o777
    except OSError:
        umask = os.umask(0o022)
        os.umask(umask)
        mode = 0o666 & ~umask
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", dir=target.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fchmod(fh.fileno(), mode)
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
