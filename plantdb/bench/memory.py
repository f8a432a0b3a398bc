"""The server's peak memory with the benchmark's plant loaded and one of each request made.

Nothing should load the whole plant into memory: the peak resident size of a `plantdb serve`
process after answering each kind of request once is reported beside the timings.
"""

from __future__ import annotations

import socket
import subprocess
import sys
import time
import urllib.parse
import urllib.request
from pathlib import Path
from typing import Any

from plantdb.errors import PlantError


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


def _requests(picks: dict[str, Any]) -> list[str]:
    quote = urllib.parse.quote
    bbox = ",".join(f"{v:.6f}" for v in picks["bbox"])
    circuit, closure, span = quote(picks["circuit"]), quote(picks["closure"]), quote(picks["span"])
    return [
        "/",
        f"/api/v1/map?bbox={bbox}",
        f"/closures/{closure}",
        f"/circuits/{circuit}",
        f"/api/v1/trace?circuit={circuit}",
        f"/api/v1/loss?circuit={circuit}",
        f"/api/v1/live?closure={closure}",
        f"/api/v1/impact?span={span}",
    ]


def _peak_kib(pid: int) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1])
    raise PlantError("cannot read the server's peak memory (no /proc here)")


def server_peak_memory_mb(url: str, picks: dict[str, Any]) -> float:
    """Start `plantdb serve` on the database, make each request once, read its peak RSS."""
    port = _free_port()
    command = [
        sys.executable,
        "-c",
        "from plantdb.cli import main; main()",
        "serve",
        "--db",
        url,
        "--host",
        "127.0.0.1",
        "--port",
        str(port),
    ]
    server = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                urllib.request.urlopen(base + "/", timeout=5).read()
                break
            except OSError:
                if time.monotonic() > deadline or server.poll() is not None:
                    raise PlantError("the benchmark server did not start") from None
                time.sleep(0.2)
        for path in _requests(picks):
            urllib.request.urlopen(base + path, timeout=120).read()
        return _peak_kib(server.pid) / 1024.0
    finally:
        server.terminate()
        server.wait(timeout=30)
