"""Passwords: the rules a new one must meet, and argon2id hashing (never kept in clear).

argon2-cffi's default parameters are argon2id with RFC 9106's second recommended profile
(t=3, m=64 MiB, p=4), above the OWASP Password Storage Cheat Sheet's argon2id minimum
(m=19 MiB, t=2, p=1); Werkzeug's default scrypt settings are not (memory).
"""

from __future__ import annotations

import unicodedata
from functools import lru_cache
from importlib import resources

from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError

from plantdb.errors import PlantError

# NIST SP 800-63B §5.1.1.2: at least 8 characters, at least 64 permitted, and a check against
# a list of commonly used values (memory).
MIN_LENGTH = 8
MAX_LENGTH = 64

_HASHER = PasswordHasher()


@lru_cache(maxsize=1)
def common_passwords() -> frozenset[str]:
    """The shipped list of passwords too common to allow, lower-cased."""
    text = resources.files("plantdb").joinpath("data/common_passwords.txt").read_text("utf-8")
    lines = (line.strip() for line in text.splitlines())
    return frozenset(line.lower() for line in lines if line and not line.startswith("#"))


def check_password_rules(password: str, name: str) -> None:
    """Refuse a password that is too short, too long, common, or the person's own name."""
    length = len(password)
    if length < MIN_LENGTH:
        raise PlantError(f"the password is too short: {length} characters, at least {MIN_LENGTH}")
    if length > MAX_LENGTH:
        raise PlantError(f"the password is too long: {length} characters, at most {MAX_LENGTH}")
    if any(unicodedata.category(c) == "Cc" for c in password):
        raise PlantError("the password holds a control character (a tab, a line break…)")
    lowered = password.lower()
    if lowered in common_passwords():
        raise PlantError("the password is on the list of common passwords; choose another")
    if lowered == name.lower():
        raise PlantError("the password is the person's own name; choose another")


def hash_password(password: str) -> str:
    """The argon2id hash of a password, in PHC string form (salt and parameters inside)."""
    return _HASHER.hash(password)


def verify_password(stored: str, password: str) -> bool:
    """True when the password matches the stored hash; False for a mismatch or a bad hash."""
    try:
        return _HASHER.verify(stored, password)
    except (VerifyMismatchError, VerificationError, InvalidHashError):
        return False


def needs_rehash(stored: str) -> bool:
    """True when the hash was made with weaker parameters than today's."""
    try:
        return _HASHER.check_needs_rehash(stored)
    except InvalidHashError:
        return True


@lru_cache(maxsize=1)
def _decoy_hash() -> str:
    return _HASHER.hash("a decoy password nobody has")


def spend_verify_time(password: str) -> None:
    """Verify against a decoy, so an unknown name takes as long to refuse as a known one."""
    verify_password(_decoy_hash(), password)
