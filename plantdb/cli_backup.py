"""`plantdb backup FILE`: a consistent copy of the database, taken while others work."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from plantdb.backup import backup_database
from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS


def backup_text(document: dict[str, Any]) -> str:
    """What was written, and for PostgreSQL the recipe of a complete copy."""
    line = (
        f"backed up {document['database']} to {document['backup']}"
        f" ({document['method']}, {document['bytes']:,} bytes, schema {document['schema']})"
    )
    hint = document.get("hint")
    return f"{line}\nnote: {hint}" if hint else line


@plant_command(cli, "backup", access=READS)
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--overwrite", is_flag=True, help="Replace FILE if it exists.")
def backup_command(run: Invocation, file: Path, overwrite: bool) -> None:
    """Copy the database to FILE, consistently, while others keep working.

    SQLite: a copy of the database file by SQLite's online backup API (open it with
    --db sqlite:///FILE). PostgreSQL: a bundle of the whole record (load it into a new,
    initialised database), and the pg_dump recipe for a complete copy.
    """
    document = backup_database(run.database(), file, overwrite=overwrite)
    run.emit(document, backup_text)
