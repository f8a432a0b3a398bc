"""Password rules and hashing, and the security log's one-line-per-event encoding."""

from __future__ import annotations

import logging

import pytest
from argon2 import Type, extract_parameters
from argon2.profiles import RFC_9106_LOW_MEMORY

from plantdb.errors import PlantError
from plantdb.passwords import (
    MAX_LENGTH,
    MIN_LENGTH,
    check_password_rules,
    common_passwords,
    hash_password,
    needs_rehash,
    verify_password,
)
from plantdb.security_log import LOGGER_NAME, escape, event_line, log_event


def test_lengths_follow_nist_800_63b() -> None:
    # NIST SP 800-63B §5.1.1.2: at least 8 characters; at least 64 permitted (memory).
    assert (MIN_LENGTH, MAX_LENGTH) == (8, 64)
    check_password_rules("x" * 7 + "Q", "ann")
    check_password_rules("tide-gauge " * 5 + "kelp-bed ", "ann")  # 64 characters
    with pytest.raises(PlantError, match="too short: 7 characters, at least 8"):
        check_password_rules("gh7&kq2", "ann")
    with pytest.raises(PlantError, match="too long: 65 characters, at most 64"):
        check_password_rules("k" * 65, "ann")


@pytest.mark.parametrize("common", ["password1", "12345678", "qwertyui", "PassWord123", "1q2w3e4r"])
def test_common_passwords_are_refused_whatever_their_case(common: str) -> None:
    with pytest.raises(PlantError, match="list of common passwords"):
        check_password_rules(common, "ann")


def test_the_common_list_is_a_few_hundred_entries_long_enough_to_matter() -> None:
    listed = common_passwords()
    assert 200 <= len(listed) <= 2000
    # Shorter ones are refused by length anyway: the list only holds what length lets through.
    assert all(len(p) >= MIN_LENGTH for p in listed)
    assert all(p == p.lower() and not p.startswith("#") for p in listed)


def test_a_password_that_is_the_name_or_holds_a_control_character_is_refused() -> None:
    with pytest.raises(PlantError, match="own name"):
        check_password_rules("Hollybush", "hollybush")
    with pytest.raises(PlantError, match="control character"):
        check_password_rules("tidal\tcurrents", "ann")


def test_hashes_are_argon2id_salted_and_verify_only_the_right_password() -> None:
    first = hash_password("lantern marsh 42")
    second = hash_password("lantern marsh 42")
    assert first.startswith("$argon2id$")
    assert first != second  # a fresh salt each time
    assert "lantern" not in first
    assert verify_password(first, "lantern marsh 42")
    assert not verify_password(first, "lantern marsh 43")
    assert not verify_password("not a hash", "lantern marsh 42")
    assert not needs_rehash(first)
    assert needs_rehash("$argon2id$v=19$m=1024,t=1,p=1$c29tZXNhbHQ$aGFzaGhhc2hoYXNo")


def test_hashing_parameters_meet_the_published_minimums() -> None:
    """Read back from a stored hash (its PHC string), so the test sees what is really used."""
    used = extract_parameters(hash_password("lantern marsh 42"))
    assert used.type is Type.ID
    # OWASP Password Storage Cheat Sheet, Argon2id: at least m=19 MiB (19456 KiB), t=2, p=1
    # (from memory). Its alternatives trade memory for passes; meeting both is stricter.
    assert used.memory_cost >= 19 * 1024
    assert used.time_cost >= 2
    assert used.parallelism >= 1
    # RFC 9106 §4, the second recommended option for memory-constrained settings: argon2id,
    # t=3, p=4, m=64 MiB, a 128-bit salt and a 256-bit tag (from memory); argon2-cffi ships
    # it as RFC_9106_LOW_MEMORY. RFC 9106 §3.1: version 0x13 (19).
    assert (used.time_cost, used.parallelism, used.memory_cost) == (3, 4, 64 * 1024)
    assert used.salt_len >= 16 and used.hash_len >= 32
    assert used.version == 19
    assert used == RFC_9106_LOW_MEMORY


def test_log_values_cannot_forge_a_line_or_a_field() -> None:
    assert escape('mallory\nrefused who="admin"') == 'mallory\\nrefused who=\\"admin\\"'
    assert escape("a\r\x1b[31mb\u2028c\\") == "a\\r\\x1b[31mb\\u2028c\\\\"
    assert escape("Zoë Ørsted") == "Zoë Ørsted"  # letters stay readable
    assert escape("x" * 1000).endswith("…") and len(escape("x" * 1000)) == 301
    line = event_line("sign-in failed", "eve\nsign-in", "10.0.0.1", "POST /sign-in")
    assert "\n" not in line
    assert line.startswith("sign-in failed at=") and line.split(" at=")[1][19:27] != ""
    assert 'who="eve\\nsign-in" from="10.0.0.1" what="POST /sign-in"' in line


def test_log_events_carry_a_utc_time(caplog: pytest.LogCaptureFixture) -> None:
    with caplog.at_level(logging.INFO, logger=LOGGER_NAME):
        log_event("sign-in", "ann", "127.0.0.1", "POST /sign-in", role="clerk")
    (record,) = caplog.records
    assert record.name == LOGGER_NAME
    stamp = record.getMessage().split(" at=")[1].split(" ")[0]
    assert stamp.endswith("Z") and "T" in stamp
