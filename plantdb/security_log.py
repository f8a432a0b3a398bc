"""The security log (logger "plantdb.security"): sign-ins, refusals, changes to people.

One event is one line: `EVENT at=<UTC> who="…" from="…" what="…" [key="…" …]`. Every value
is quoted and escaped, so a name or a path holding a line break, a quote or another control
character cannot forge a second line or a field (log injection).

`plantdb serve` and the people commands (`plantdb user …`, `plantdb token add`) send these
lines to the same place, through `sent_to`: the file named by `--security-log` (serve) or
$PLANTDB_SECURITY_LOG, else standard error.
"""

from __future__ import annotations

import datetime as dt
import logging
import os
import sys
import unicodedata
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

LOGGER_NAME = "plantdb.security"
ENV_SECURITY_LOG = "PLANTDB_SECURITY_LOG"
LINE_FORMAT = "plantdb.security %(levelname)s %(message)s"
logger = logging.getLogger(LOGGER_NAME)

# Unicode categories escaped: controls, format characters, surrogates, private use,
# unassigned, and the line and paragraph separators some readers break lines at.
_ESCAPED_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"})
_SHORT = {"\n": "\\n", "\r": "\\r", "\t": "\\t", '"': '\\"', "\\": "\\\\"}
# A value longer than this is cut (a megabyte-long "name" should not fill the log).
LONGEST_VALUE = 300


def escape(value: object) -> str:
    """A value safe to put between double quotes on one log line."""
    text = str(value)
    cut = len(text) > LONGEST_VALUE
    parts = []
    for char in text[:LONGEST_VALUE]:
        if char in _SHORT:
            parts.append(_SHORT[char])
        elif unicodedata.category(char) in _ESCAPED_CATEGORIES:
            code = ord(char)
            parts.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            parts.append(char)
    return "".join(parts) + ("…" if cut else "")


def event_line(event: str, who: str, where: str, what: str, **more: object) -> str:
    """One event as one line: the event's name, UTC time, who, from where, what, and more."""
    at = dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    fields = {"who": who, "from": where, "what": what, **more}
    quoted = " ".join(f'{key}="{escape(value)}"' for key, value in fields.items())
    return f"{escape(event)} at={at} {quoted}"


def log_event(
    event: str, who: str, where: str, what: str, *, level: int = logging.INFO, **more: object
) -> None:
    """Write one security event (successes at INFO, failures and refusals at WARNING)."""
    logger.log(level, "%s", event_line(event, who, where, what, **more))


def configured_path() -> Path | None:
    """The security log file named by $PLANTDB_SECURITY_LOG (None: standard error)."""
    value = os.environ.get(ENV_SECURITY_LOG)
    return Path(value) if value else None


@contextmanager
def sent_to(path: Path | None) -> Iterator[None]:
    """Within the block, write the security log to a file (appended), or to standard error."""
    if path is None:
        handler: logging.Handler = logging.StreamHandler(sys.stderr)
    else:
        handler = logging.FileHandler(path, encoding="utf-8")
    handler.setFormatter(logging.Formatter(LINE_FORMAT))
    level = logger.level
    logger.setLevel(logging.INFO)
    logger.addHandler(handler)
    try:
        yield
    finally:
        logger.removeHandler(handler)
        logger.setLevel(level)
        handler.close()
