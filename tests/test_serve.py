"""`recordkit serve` as a user runs it: its address printed, one rebuild per saved edit (never one for the
tool's own cache files), each rebuild's time printed, and the changed page served."""
from __future__ import annotations

import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

from .conftest import DEMO_AS_OF, REPO


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def wait_for(predicate, seconds: float = 60.0) -> bool:
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        if predicate():
            return True
        time.sleep(0.2)
    return False


def test_one_saved_edit_is_one_rebuild_and_the_page_is_served_updated(tmp_path):
    records = tmp_path / "records"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    port = free_port()
    script = Path(sys.executable).parent / "recordkit"
    log = tmp_path / "serve.log"
    with open(log, "wb") as out:
        server = subprocess.Popen([str(script), "serve", "-r", str(records), "--as-of", DEMO_AS_OF.isoformat(),
                                   "--address", f"127.0.0.1:{port}"], stdout=out, stderr=subprocess.STDOUT)
    try:
        text = lambda: log.read_text()
        assert wait_for(lambda: "Serving on http://127.0.0.1:" in text()), text()
        logged = subprocess.run([str(script), "log", "-r", str(records), "tansy-house/flat-1/landing-smoke", "test",
                                 "--result", "pass", "--date", "2026-11-30", "--by", "serve-check", "--again"],
                                capture_output=True, text=True)
        assert logged.returncode == 0, logged.stderr
        assert wait_for(lambda: text().count("Documentation built in") == 2), text()
        page = f"http://127.0.0.1:{port}/properties/tansy-house/flat-1.html"
        assert "serve-check" in urllib.request.urlopen(page, timeout=10).read().decode()
        time.sleep(3)  # time for a second or third rebuild, had the tool's own writes started one
        assert text().count("Detected file changes") == 1, text()
        assert text().count("Documentation built in") == 2, text()
        assert "page(s) made" in text()
    finally:
        server.terminate()
        server.wait(timeout=20)
