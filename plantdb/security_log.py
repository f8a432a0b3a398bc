"""The security log (logger "plantdb.security"): sign-ins, refusals, changes to people.

One event is one line: `EVENT at=<UTC> who="…" from="…" what="…" [key="…" …]`. Every value
is quoted and escaped, so a name or a path holding a line break, a quote or another control
character cannot forge a second line or a field (log injection).
"""

from __future__ import annotations

import datetime as dt
import logging
import unicodedata

LOGGER_NAME = "plantdb.security"
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
