"""Commands that write act as a person once people exist, with the web's roles."""

from __future__ import annotations

import json
from pathlib import Path

import click
import pytest

from plantdb.cli import cli
from plantdb.cli_access import ACCESS_MARK, ENV_TOKEN, READS
from tests.conftest import PlantCli
from tests.networks import ashgrove

PASSWORD = "long enough and not common 7"


def _commands(group: click.Group, prefix: str = "") -> list[tuple[str, click.Command]]:
    found = []
    for name, command in sorted(group.commands.items()):
        words = f"{prefix}{name}"
        if isinstance(command, click.Group):
            found += _commands(command, words + " ")
        else:
            found.append((words, command))
    return found


def test_every_command_says_who_may_run_it() -> None:
    """A new command that writes cannot slip in unguarded: each one is declared a reader or
    names the roles that may run it."""
    undeclared = [words for words, command in _commands(cli) if not hasattr(command, ACCESS_MARK)]
    assert undeclared == []
    writers = {words for words, command in _commands(cli) if getattr(command, ACCESS_MARK) != READS}
    # The commands that change the record or its people (bench builds only its own plant).
    assert writers == {
        "demo",
        "import splices",
        "init",
        "load",
        "move-splice",
        "splice",
        "synth",
        "token add",
        "unsplice",
        "user add",
        "user disable",
        "user enable",
        "user password",
    }


def _with_people(plant: PlantCli, tmp_path: Path) -> dict[str, str]:
    """The Ashgrove plant (loaded while nobody was defined), a clerk and a viewer with tokens."""
    file = tmp_path / "bundle.json"
    file.write_text(json.dumps(ashgrove().data))
    assert plant("load", str(file)).exit_code == 0
    tokens = {}
    for name, role in (("carla", "clerk"), ("vic", "viewer")):
        added = plant("user", "add", name, "--role", role, "--database-owner", input=PASSWORD)
        assert added.exit_code == 0, added.output
        tokens[name] = plant("token", "add", name, "--database-owner").stdout.strip()
    return tokens


def _changes_of(plant: PlantCli, label: str) -> list[dict]:
    changes = plant.json("history", "--closure", "AC-1")["changes"]
    return [c for c in changes if c["label"] == label]


SPLICE = ["splice", "--closure", "AC-1", "--a", "F-1:7/A", "--b", "D-1:2", "--tray", "1"]


def test_with_nobody_defined_commands_run_as_the_login(plant: PlantCli, tmp_path: Path) -> None:
    file = tmp_path / "bundle.json"
    file.write_text(json.dumps(ashgrove().data))
    assert plant("load", str(file)).exit_code == 0
    done = plant(*SPLICE, "--slot", "2")
    assert done.exit_code == 0, done.output
    (change,) = _changes_of(plant, "AC-1 tray 1 slot 2")
    assert change["actor"].startswith("cli:")


def test_once_people_exist_a_write_needs_a_person(
    plant: PlantCli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    tokens = _with_people(plant, tmp_path)
    monkeypatch.delenv(ENV_TOKEN, raising=False)
    refused = plant(*SPLICE, "--slot", "2")
    assert refused.exit_code == 1
    assert "people are defined, so `plantdb splice` acts as one" in refused.stderr
    assert "clerk or admin" in refused.stderr and ENV_TOKEN in refused.stderr
    # Reading needs no person on the command line (the database's credentials already do).
    assert plant("live", "--closure", "AC-1").exit_code == 0

    monkeypatch.setenv(ENV_TOKEN, tokens["vic"])
    viewer = plant(*SPLICE, "--slot", "2")
    assert viewer.exit_code == 1
    assert "vic (viewer) may not run `plantdb splice`: it needs clerk or admin" in viewer.stderr
    assert "refused at=" in viewer.stderr and 'who="vic"' in viewer.stderr  # security log

    monkeypatch.setenv(ENV_TOKEN, tokens["carla"])
    clerk = plant(*SPLICE, "--slot", "2")
    assert clerk.exit_code == 0, clerk.output
    (change,) = _changes_of(plant, "AC-1 tray 1 slot 2")
    assert change["actor"] == "carla"  # the history names the person, not the login
    # A clerk may not change people.
    people = plant("user", "add", "zed", "--role", "admin", input=PASSWORD)
    assert people.exit_code == 1 and "it needs admin" in people.stderr
    assert [p["name"] for p in plant.json("user", "list")["people"]] == ["carla", "vic"]


def test_a_bad_token_is_refused_and_logged(
    plant: PlantCli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    tokens = _with_people(plant, tmp_path)
    monkeypatch.setenv(ENV_TOKEN, "pdb_not-a-real-token")
    unknown = plant(*SPLICE, "--slot", "2")
    assert unknown.exit_code == 1 and "unknown or revoked" in unknown.stderr
    assert "token refused at=" in unknown.stderr
    assert plant("user", "disable", "carla", "--database-owner").exit_code == 0
    monkeypatch.setenv(ENV_TOKEN, tokens["carla"])
    disabled = plant(*SPLICE, "--slot", "2")
    assert disabled.exit_code == 1 and "its person is disabled" in disabled.stderr


def test_the_database_owner_acts_as_administrator_and_is_logged(
    plant: PlantCli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    _with_people(plant, tmp_path)
    monkeypatch.delenv(ENV_TOKEN, raising=False)
    log = tmp_path / "security.log"
    monkeypatch.setenv("PLANTDB_SECURITY_LOG", str(log))
    done = plant("--database-owner", *SPLICE, "--slot", "3")
    assert done.exit_code == 0, done.output
    lines = log.read_text(encoding="utf-8").splitlines()
    assert any(
        "WARNING database owner acts as administrator" in line and 'what="splice"' in line
        for line in lines
    )
    (change,) = _changes_of(plant, "AC-1 tray 1 slot 3")
    assert change["actor"].startswith("cli:")


def test_a_security_log_that_cannot_be_written_stops_a_write_first(
    plant: PlantCli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Every command that writes opens the security log before it does anything, so a
    refusal it would log can never pass unlogged, and nothing is half done."""
    tokens = _with_people(plant, tmp_path)
    monkeypatch.setenv(ENV_TOKEN, tokens["carla"])
    monkeypatch.setenv("PLANTDB_SECURITY_LOG", str(tmp_path / "no such folder" / "x.log"))
    refused = plant(*SPLICE, "--slot", "2")
    assert refused.exit_code == 1 and "no such folder" in refused.stderr
    monkeypatch.delenv("PLANTDB_SECURITY_LOG")
    assert _changes_of(plant, "AC-1 tray 1 slot 2") == []
