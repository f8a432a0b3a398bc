"""`plantdb serve`: the web UI and JSON API under waitress, a production WSGI server."""

from __future__ import annotations

import ipaddress
import json
import os
from pathlib import Path

import click

from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS
from plantdb.errors import PlantError
from plantdb.people import anyone_defined
from plantdb.security_log import ENV_SECURITY_LOG, sent_to

ENV_TILE_URL = "PLANTDB_TILE_URL"


def is_loopback(host: str) -> bool:
    """True for an address only this machine can reach (127.0.0.0/8, ::1, localhost)."""
    if host.lower() == "localhost":
        return True
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        return False


def _refuse_open_to_others(run: Invocation, host: str) -> None:
    """With nobody defined there is no sign-in: refuse to listen where others can reach."""
    if is_loopback(host):
        return
    with run.database().read() as session:
        if anyone_defined(session):
            return
    raise PlantError(
        f"--host {host}: nobody is defined, so there is no sign-in and anyone who reached the"
        " server could change the record; it listens on 127.0.0.1 only until a person is added"
        " (`plantdb user add NAME --role admin`)"
    )


@plant_command(cli, "serve", access=READS)
@click.option("--host", default="127.0.0.1", show_default=True, help="Address to listen on.")
@click.option(
    "--port",
    default=5000,
    show_default=True,
    type=click.IntRange(0, 65535),
    help="Port to listen on.",
)
@click.option(
    "--tile-url",
    metavar="URL",
    help="Base-map tiles, e.g. https://tiles.example/{z}/{x}/{y}.png (default"
    f" ${ENV_TILE_URL}, else none: the plant draws on a plain background).",
)
@click.option("--tile-attribution", default="", help="Credit line the tile provider asks for.")
@click.option(
    "--threads",
    default=8,
    show_default=True,
    type=click.IntRange(1, 256),
    help="Requests answered at once.",
)
@click.option("--read-only", is_flag=True, help="Refuse every change to the record.")
@click.option(
    "--behind-proxy",
    is_flag=True,
    help="Trust the X-Forwarded-For/-Proto/-Host/-Prefix headers of one reverse proxy (a TLS"
    " proxy in front of plantdb); never without one, or clients could forge their address.",
)
@click.option(
    "--security-log",
    type=click.Path(dir_okay=False, path_type=Path),
    envvar=ENV_SECURITY_LOG,
    help="Append the security log (sign-ins, refusals) to this file (default:"
    f" ${ENV_SECURITY_LOG}, else standard error).",
)
def serve_command(
    run: Invocation,
    host: str,
    port: int,
    tile_url: str | None,
    tile_attribution: str,
    threads: int,
    read_only: bool,
    behind_proxy: bool,
    security_log: Path | None,
) -> None:
    """Serve the web UI at / and the JSON API under /api/v1/ (until interrupted).

    While nobody is defined (`plantdb user add`) the server has no sign-in, so it listens on
    this machine only (127.0.0.1 or ::1) and refuses any other --host.
    """
    # Imported here: the core package never imports the web app at module level.
    from waitress import serve

    from webui import create_app

    _refuse_open_to_others(run, host)
    app = create_app(
        {
            "DATABASE_URL": run.url,
            "TILE_URL": tile_url or os.environ.get(ENV_TILE_URL) or None,
            "TILE_ATTRIBUTION": tile_attribution,
            "READ_ONLY": read_only,
            "BEHIND_PROXY": 1 if behind_proxy else 0,
        }
    )
    address = f"http://{host}:{port}/"
    if run.as_json:
        document = {"serving": address, "database": run.url, "read_only": read_only}
        click.echo(json.dumps({**document, "behind_proxy": behind_proxy}))
    else:
        click.echo(f"plantdb: serving {run.url} at {address} (Ctrl+C to stop)")
    with sent_to(security_log):
        serve(app, host=host, port=port, threads=threads, ident="plantdb")
