"""The `plantdb` command: parses, calls plantdb's services, prints. Thin on purpose.

Exit status: 0 done; 1 understood but refused (one clear line on standard error naming what
and where, then any details); 2 a usage error (click's own).
"""

from __future__ import annotations

import functools
import json
import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

import click
from sqlalchemy.exc import DBAPIError

from plantdb import __version__
from plantdb.cli_access import ACCESS_MARK, READS, acting_for
from plantdb.db import (
    ENV_URL,
    Database,
    require_current_schema,
    resolve_url,
    run_in_transaction,
)
from plantdb.errors import PlantError, UsageProblem
from plantdb.security_log import configured_path, sent_to

F = TypeVar("F", bound=Callable[..., Any])


class Invocation:
    """What every command gets: where the database is, and whether to print JSON."""

    def __init__(self, db_url: str | None, as_json: bool) -> None:
        # Whether the user named a database (--db or the environment), not the default.
        self.explicit_url = bool(db_url or os.environ.get(ENV_URL))
        self.url = resolve_url(db_url)
        self.as_json = as_json
        self._database: Database | None = None

    def database(self, *, current: bool = True) -> Database:
        """The database, refused unless its schema is the code's newest (unless told not to)."""
        if self._database is None:
            self._database = Database(self.url)
        if current:
            require_current_schema(self._database.engine)
        return self._database

    def emit(self, document: Any, text: Callable[[Any], str]) -> None:
        """Print the JSON document with --json, else its human-readable form."""
        if self.as_json:
            click.echo(json.dumps(document, indent=1, ensure_ascii=False))
        else:
            click.echo(text(document))

    def close(self) -> None:
        if self._database is not None:
            self._database.dispose()


def plant_command(
    group: click.Group, name: str, *, access: str | frozenset[str], **settings: Any
) -> Callable[[F], F]:
    """Register a command with the options every command accepts.

    `access` is `cli_access.READS` for a command that changes nothing in the record, else
    `cli_access.writes(ROLE, ...)`: once people exist, the command then acts as a person whose
    role allows it (see `plantdb.cli_access`). Every command says which; a test holds that.
    """
    words = " ".join(part for part in (group.name, name) if part and part != "cli")

    def decorate(function: F) -> F:
        @group.command(name, **settings)
        @click.option(
            "--db",
            "db_url",
            metavar="URL",
            help="SQLAlchemy database URL (default: $PLANTDB_DATABASE_URL, else ./plantdb.sqlite)",
        )
        @click.option("--json", "as_json", is_flag=True, help="Print the JSON document.")
        @click.option(
            "--database-owner",
            is_flag=True,
            help="Once people exist, act as the administrator without a token (you hold the"
            " database's own credentials; written to the security log).",
        )
        @click.pass_context
        @functools.wraps(function)
        def wrapper(
            ctx: click.Context,
            db_url: str | None,
            as_json: bool,
            database_owner: bool,
            **kwargs: Any,
        ) -> Any:
            parent = ctx.find_object(_GroupOptions)
            invocation = Invocation(
                db_url or (parent.db_url if parent else None),
                as_json or bool(parent and parent.as_json),
            )
            try:
                if access == READS:
                    return function(invocation, **kwargs)
                owner = database_owner or bool(parent and parent.database_owner)
                database = invocation.database(current=False)
                assert isinstance(access, frozenset)
                # The security log is opened first (where `plantdb serve` writes its own), so
                # a log that cannot be written stops the command before anything changes.
                with sent_to(configured_path()), acting_for(database, words, access, owner):
                    return function(invocation, **kwargs)
            finally:
                invocation.close()

        setattr(wrapper, ACCESS_MARK, access)
        return wrapper  # type: ignore[return-value]

    return decorate


class _GroupOptions:
    def __init__(self, db_url: str | None, as_json: bool, database_owner: bool = False) -> None:
        self.db_url = db_url
        self.as_json = as_json
        self.database_owner = database_owner


class _Group(click.Group):
    """Turns a refusal into one clear line on standard error and exit status 1."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except UsageProblem as exc:
            _refuse(exc.message, exc.details, status=2)
        except PlantError as exc:
            _refuse(exc.message, exc.details)
        except DBAPIError as exc:
            _refuse(f"database error: {str(exc.orig).strip().splitlines()[0]}", [])
        except OSError as exc:
            _refuse(f"{exc.strerror or exc}: {exc.filename or ''}".rstrip(": "), [])


def _refuse(message: str, details: list[str], status: int = 1) -> None:
    click.echo(f"plantdb: {message}", err=True)
    for line in details:
        click.echo(f"  {line}", err=True)
    sys.exit(status)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="plantdb")
@click.option("--db", "db_url", metavar="URL", help="SQLAlchemy database URL for any command.")
@click.option("--json", "as_json", is_flag=True, help="Print JSON documents.")
@click.option(
    "--database-owner",
    is_flag=True,
    help="Once people exist, act as the administrator without a token (logged).",
)
@click.pass_context
def cli(ctx: click.Context, db_url: str | None, as_json: bool, database_owner: bool) -> None:
    """plantdb: the record of a fiber-optic cable plant, and the answers drawn from it.

    Once people exist, commands that write act as a person: put an API token in
    $PLANTDB_TOKEN (see `plantdb token add`).
    """
    ctx.obj = _GroupOptions(db_url, as_json, database_owner)


def main() -> None:
    """Console entry point."""
    cli(prog_name="plantdb")


# The commands live in their own modules; importing them registers them on `cli`.
from plantdb import (  # noqa: E402,F401
    cli_backup,
    cli_commands,
    cli_history,
    cli_people,
    cli_records,
    cli_scale,
    cli_serve,
    cli_trace,
)

__all__ = ["Invocation", "Path", "cli", "main", "plant_command", "run_in_transaction"]
