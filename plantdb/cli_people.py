"""People and tokens: `plantdb user add|disable|enable|password|list`, `plantdb token add`.

Once anyone exists, the commands that change people need an administrator (`plantdb.cli_access`:
an admin's API token, or `--database-owner`), and each change is written to the security log.
Passwords are read from standard input (typed twice at a terminal), never from the command
line, where other users of the machine could see them in the process list.
"""

from __future__ import annotations

import logging
import sys
from typing import Any

import click
from sqlalchemy.orm import Session

from plantdb.audit import current_actor
from plantdb.cli import Invocation, cli, plant_command
from plantdb.cli_access import READS, writes
from plantdb.db import run_in_transaction
from plantdb.errors import PlantError
from plantdb.people import (
    ROLES,
    add_person,
    add_token,
    disable_person,
    enable_person,
    list_people,
    set_password,
)
from plantdb.security_log import log_event


def _log(event: str, name: str, **more: object) -> None:
    """A people change in the security log, made by whoever the command acts as: the person
    whose token it ran with, else `cli:<login>`, as the history records it."""
    log_event(event, current_actor(), "command line", name, level=logging.INFO, **more)


def read_password() -> str:
    """A password from standard input: typed twice at a terminal, else its first line."""
    if sys.stdin.isatty():
        value: str = click.prompt(
            "Password", hide_input=True, confirmation_prompt="Repeat the password"
        )
        return value
    line = sys.stdin.readline()
    if not line:
        raise PlantError("no password on standard input (give it as one line)")
    return line.rstrip("\r\n")


@cli.group("user")
def user_group() -> None:
    """Add, list and disable the people who may use the web UI and the API."""


@plant_command(user_group, "add", access=writes())
@click.argument("name")
@click.option(
    "--role",
    required=True,
    type=click.Choice(ROLES),
    help="viewer reads; clerk edits the record; dispatcher sets circuit status; engineer"
    " edits circuits and test results; admin does everything.",
)
def user_add_command(run: Invocation, name: str, role: str) -> None:
    """Add a person; the password is read from standard input (8 to 64 characters)."""
    password = read_password()

    def work(session: Session) -> dict[str, Any]:
        person = add_person(session, name, role, password)
        return {"name": person.name, "role": person.role.value, "added": True}

    document = run_in_transaction(run.database(), work)
    _log("person added", name, role=role)
    run.emit(document, lambda d: f"added {d['name']} ({d['role']})")


@plant_command(user_group, "disable", access=writes())
@click.argument("name")
def user_disable_command(run: Invocation, name: str) -> None:
    """Disable a person: their sessions and tokens stop working at once."""
    run_in_transaction(run.database(), lambda session: disable_person(session, name))
    _log("person disabled", name)
    run.emit(
        {"name": name, "disabled": True},
        lambda d: f"disabled {d['name']}: their sessions and tokens are revoked",
    )


@plant_command(user_group, "enable", access=writes())
@click.argument("name")
def user_enable_command(run: Invocation, name: str) -> None:
    """Let a disabled person sign in again (their old sessions and tokens stay revoked)."""
    run_in_transaction(run.database(), lambda session: enable_person(session, name))
    _log("person enabled", name)
    run.emit({"name": name, "disabled": False}, lambda d: f"enabled {d['name']}")


@plant_command(user_group, "password", access=writes())
@click.argument("name")
def user_password_command(run: Invocation, name: str) -> None:
    """Set a person's password (from standard input); their sessions and tokens are revoked."""
    password = read_password()
    run_in_transaction(run.database(), lambda session: set_password(session, name, password))
    _log("password set", name)
    run.emit(
        {"name": name, "password_set": True},
        lambda d: f"new password set for {d['name']}; their sessions and tokens are revoked",
    )


def _people_text(document: dict[str, Any]) -> str:
    if not document["people"]:
        return "nobody is defined: the web UI is open to this machine only"
    lines = []
    for person in document["people"]:
        state = "  disabled" if person["disabled"] else ""
        tokens = f"  {person['tokens']} tokens" if person["tokens"] else ""
        lines.append(f"{person['name']}  {person['role']}{state}{tokens}")
    return "\n".join(lines)


@plant_command(user_group, "list", access=READS)
def user_list_command(run: Invocation) -> None:
    """List every person with their role, whether disabled, and their working tokens."""
    with run.database().read() as session:
        people = list_people(session)
    run.emit({"people": people}, _people_text)


@cli.group("token")
def token_group() -> None:
    """API tokens (`Authorization: Bearer …`) for programs that use the JSON API."""


@plant_command(token_group, "add", access=writes())
@click.argument("name")
def token_add_command(run: Invocation, name: str) -> None:
    """Print a new API token for the person; it is shown this once and kept only as a hash."""
    token = run_in_transaction(run.database(), lambda session: add_token(session, name))
    _log("token added", name)
    run.emit(
        {"name": name, "token": token},
        lambda d: d["token"],
    )
    if not run.as_json and sys.stderr.isatty():
        click.echo("(shown once: store it now; `plantdb user disable` revokes it)", err=True)
