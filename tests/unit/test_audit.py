"""Who a change is recorded as: the name set by `acting_as` (the web, per request), else the
login name of whoever runs the command."""

from __future__ import annotations

import getpass
import threading

import pytest

from plantdb import audit
from plantdb.audit import acting_as, current_actor
from plantdb.errors import PlantError


def test_a_command_acts_as_its_login_name(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(getpass, "getuser", lambda: "tamsin")
    assert current_actor() == "cli:tamsin"


def test_an_unnamed_login_is_still_recorded(monkeypatch: pytest.MonkeyPatch) -> None:
    def nameless() -> str:
        raise OSError("No username set in the environment")

    monkeypatch.setattr(getpass, "getuser", nameless)
    assert current_actor() == f"cli:{audit.UNKNOWN_LOGIN}"


def test_acting_as_names_the_actor_within_the_block_only() -> None:
    outside = current_actor()
    with acting_as("  Clerk Ashby  "):
        assert current_actor() == "Clerk Ashby"
        with acting_as("Dispatcher Wren"):
            assert current_actor() == "Dispatcher Wren"
        assert current_actor() == "Clerk Ashby"
    assert current_actor() == outside


def test_another_thread_does_not_see_this_ones_actor() -> None:
    """A server's threads serve different people: each request's name stays its own."""
    seen: list[str] = []
    with acting_as("Clerk Ashby"):
        worker = threading.Thread(target=lambda: seen.append(current_actor()))
        worker.start()
        worker.join()
    assert seen == [current_actor()] and seen != ["Clerk Ashby"]


@pytest.mark.parametrize(
    ("name", "words"),
    [("", "the acting name is empty"), ("   ", "the acting name is empty"),
     ("x" * 101, "longer than 100 characters")],
)  # fmt: skip
def test_a_nameless_or_overlong_actor_is_refused(name: str, words: str) -> None:
    with pytest.raises(PlantError, match=words), acting_as(name):
        pytest.fail("the block must not run")
