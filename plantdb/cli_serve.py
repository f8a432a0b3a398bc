"""`plantdb serve`: the web UI and JSON API under waitress, a production WSGI server."""

from __future__ import annotations

import json
import os

import click

from plantdb.cli import Invocation, cli, plant_command

ENV_TILE_URL = "PLANTDB_TILE_URL"


@plant_command(cli, "serve")
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
def serve_command(
    run: Invocation,
    host: str,
    port: int,
    tile_url: str | None,
    tile_attribution: str,
    threads: int,
    read_only: bool,
) -> None:
    """Serve the web UI at / and the JSON API under /api/v1/ (until interrupted)."""
    # Imported here: the core package never imports the web app at module level.
    from waitress import serve

    from webui import create_app

    app = create_app(
        {
            "DATABASE_URL": run.url,
            "TILE_URL": tile_url or os.environ.get(ENV_TILE_URL) or None,
            "TILE_ATTRIBUTION": tile_attribution,
            "READ_ONLY": read_only,
        }
    )
    address = f"http://{host}:{port}/"
    if run.as_json:
        click.echo(json.dumps({"serving": address, "database": run.url, "read_only": read_only}))
    else:
        click.echo(f"plantdb: serving {run.url} at {address} (Ctrl+C to stop)")
    serve(app, host=host, port=port, threads=threads, ident="plantdb")
