"""Recordings kept as evidence, stored by content hash so no two files can overwrite each other."""
from __future__ import annotations

import hashlib
import os
import shutil
from pathlib import Path

EVIDENCE_DIR = "evidence"


def content_hash(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return "sha256:" + digest.hexdigest()


def evidence_path(records_dir: Path, reference: str) -> Path:
    return records_dir / EVIDENCE_DIR / (reference.split(":", 1)[1] + ".wav")


def keep(records_dir: Path, recording: Path) -> str:
    """Copy a recording into records/evidence/<sha256>.wav (once); returns 'sha256:<hex>'."""
    reference = content_hash(recording)
    target = evidence_path(records_dir, reference)
    if not target.exists():
        target.parent.mkdir(parents=True, exist_ok=True)
        temp = target.with_name(f".{target.name}.{os.getpid()}.tmp")
        shutil.copyfile(recording, temp)
        os.replace(temp, target)
    return reference
