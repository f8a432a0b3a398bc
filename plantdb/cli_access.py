"""Who may run a command that writes: the web's roles, on the command line.

With nobody defined (a single user's machine), every command runs as before, and its changes
are recorded as made by `cli:<login name>`. Once any person exists, a command that writes acts
as a person: the holder of an API token in `$PLANTDB_TOKEN` (`plantdb token add NAME`), whose
role must allow the command, and whose name the history then records. `--database-owner`
lets whoever holds the database's own credentials act as its administrator without a token
(to add the first administrator's token, or to recover when every administrator is locked
out); that is written to the security log. The boundary it cannot move: anyone who can
connect to the database with plantdb's credentials could change it with other tools, so
those credentials stay with the administrators (docs/operations.md).

Commands that only read need no person: reading the database already needs its credentials.
"""

from __future__ import annotations

import getpass
import logging
import os
from contextlib import AbstractContextManager, nullcontext

from sqlalchemy.exc import DBAPIError

from plantdb.audit import acting_as
from plantdb.db import Database, run_in_transaction, schema_revisions
from plantdb.errors import PlantError
from plantdb.model import Role
from plantdb.people import anyone_defined, authenticate_token
from plantdb.security_log import log_event

ENV_TOKEN = "PLANTDB_TOKEN"
READS = "reads"
ACCESS_MARK = "plantdb_access"  # the attribute on each command saying who may run it
ADMIN = Role.ADMIN.value
# Roles as the web's `@writes` names them; the administrator may always.
Access = str | frozenset[str]


def writes(*roles: str) -> frozenset[str]:
    """The roles that may run a command that writes (the administrator is always among them)."""
    unknown = [r for r in roles if r not in {role.value for role in Role}]
    if unknown:
        raise ValueError(f"unknown roles {unknown}")
    return frozenset(roles) | {ADMIN}


def _login() -> str:
    try:
        return getpass.getuser() or "unknown"
    except (OSError, KeyError, ImportError):
        return "unknown"


def _log(event: str, who: str, what: str, level: int, **more: object) -> None:
    log_event(event, who, "command line", what, level=level, **more)


def _people_defined(database: Database) -> bool:
    """Whether anyone is defined; a database without the people table (not initialised, or
    from before people existed) has nobody."""
    if schema_revisions(database.engine)[0] is None:
        return False  # not initialised (and a missing SQLite file is not created by asking)
    try:
        with database.read() as session:
            return anyone_defined(session)
    except DBAPIError:
        return False


def _allowed(roles: frozenset[str]) -> str:
    named = sorted(roles - {ADMIN})
    return " or ".join([*named, ADMIN]) if named else ADMIN


def acting_for(
    database: Database, command: str, roles: frozenset[str], database_owner: bool
) -> AbstractContextManager[None]:
    """The context a command that writes runs in: as the token's person, as the database
    owner, or (nobody defined) as the login; refused otherwise, before anything is written."""
    if not _people_defined(database):
        return nullcontext()
    if database_owner:
        _log(
            "database owner acts as administrator",
            f"cli:{_login()}",
            command,
            logging.WARNING,
        )
        return nullcontext()
    token = os.environ.get(ENV_TOKEN, "").strip()
    if not token:
        raise PlantError(
            f"people are defined, so `plantdb {command}` acts as one: put the API token of"
            f" a person who may ({_allowed(roles)}) in ${ENV_TOKEN} (plantdb token add NAME),"
            " or, holding the database's own credentials, give --database-owner"
        )
    identity = run_in_transaction(database, lambda s: authenticate_token(s, token))
    if identity is None:
        _log("token refused", f"cli:{_login()}", command, logging.WARNING)
        raise PlantError(
            f"the token in ${ENV_TOKEN} is unknown or revoked, or its person is disabled"
        )
    if identity.role not in roles:
        _log(
            "refused",
            identity.name,
            command,
            logging.WARNING,
            role=identity.role,
        )
        raise PlantError(
            f"{identity.name} ({identity.role}) may not run `plantdb {command}`:"
            f" it needs {_allowed(roles)}"
        )
    return acting_as(identity.name)
