"""File fingerprints for provenance."""

from __future__ import annotations

import hashlib
import os


def sha256_file(path: str | os.PathLike[str], block_bytes: int = 1 << 22) -> str:
    """Hex SHA-256 of a file's bytes, read in blocks (bounded memory)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while True:
            block = fh.read(block_bytes)
            if not block:
                break
            h.update(block)
    return h.hexdigest()
