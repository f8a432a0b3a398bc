"""The `plantdb` command's basics: help, where the database is, the demo town, dump and load,
usage errors, and never a traceback for a user's mistake.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from plantdb.cli import cli
from plantdb.db import ENV_URL
from tests.conftest import PlantCli
from tests.networks import ashgrove


def _invoke(*args: str, env: dict[str, str | None] | None = None) -> Result:
    result = CliRunner().invoke(cli, list(args), env=env, catch_exceptions=False)
    assert "Traceback" not in result.output
    return result


def _ashgrove_file(tmp_path: Path) -> Path:
    file = tmp_path / "ashgrove.json"
    file.write_text(json.dumps(ashgrove().data), encoding="utf-8")
    return file


def test_help_lists_the_record_commands() -> None:
    result = _invoke("--help")
    assert result.exit_code == 0
    listed = {line.split()[0] for line in result.stdout.split("Commands:")[1].splitlines() if line}
    assert {"init", "demo", "load", "dump", "summary"} <= listed
    for command in ("init", "demo", "load", "dump"):
        assert _invoke(command, "--help").exit_code == 0


def test_the_database_is_found_by_option_before_or_after_or_environment(
    plant: PlantCli, db_url: str, tmp_path: Path
) -> None:
    assert plant("load", str(_ashgrove_file(tmp_path))).exit_code == 0
    after = json.loads(_invoke("summary", "--json", "--db", db_url).stdout)
    before = json.loads(_invoke("--db", db_url, "summary", "--json").stdout)
    group_json = json.loads(_invoke("--json", "--db", db_url, "summary").stdout)
    from_env = json.loads(_invoke("summary", "--json", env={ENV_URL: db_url}).stdout)
    assert after["cables"] == 2 and after["splices"] == 1
    assert before == after == group_json == from_env
    # --db wins over the environment.
    elsewhere = f"sqlite:///{tmp_path / 'elsewhere.sqlite'}"
    assert _invoke("summary", "--db", db_url, env={ENV_URL: elsewhere}).exit_code == 0
    refused = _invoke("summary", env={ENV_URL: elsewhere})
    assert refused.exit_code == 1 and "elsewhere.sqlite is not initialised" in refused.stderr


def test_without_any_setting_the_database_is_plantdb_sqlite_here(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    result = _invoke("init", env={ENV_URL: None})
    assert result.exit_code == 0, result.output
    assert (tmp_path / "plantdb.sqlite").is_file()
    assert "sqlite:///plantdb.sqlite" in result.stdout


def test_the_demo_town_loads_into_an_empty_database_once(plant: PlantCli) -> None:
    first = plant("demo")
    assert first.exit_code == 0, first.output
    assert first.stdout.startswith("demo town loaded:")
    counts = plant.json("summary")
    for name, least in (
        ("structures", 30),
        ("spans", 30),
        ("cables", 8),
        ("closures", 6),
        ("panels", 3),
        ("splices", 100),
        ("circuits", 15),
    ):
        assert counts[name] >= least, (name, counts[name])
    statuses = {key for key, n in counts.items() if key.startswith("circuits_") and n}
    assert len(statuses) >= 3, statuses
    assert sum(counts[key] for key in statuses) == counts["circuits"]
    again = plant("demo")
    assert again.exit_code == 1
    assert again.stdout == "" and "Traceback" not in again.output
    assert again.stderr.startswith("plantdb: the demo town loads into an empty database")
    assert plant.json("summary") == counts


def test_a_dump_loads_into_a_fresh_database_identically(plant: PlantCli, tmp_path: Path) -> None:
    assert plant("demo").exit_code == 0
    file = tmp_path / "record.json"
    written = plant("dump", "-o", str(file))
    assert written.exit_code == 0, written.output
    assert f"wrote {file}" in written.stderr
    original = plant("dump").stdout
    assert file.read_text(encoding="utf-8") == original
    copy = PlantCli(f"sqlite:///{tmp_path / 'copy.sqlite'}")
    assert copy("init").exit_code == 0
    loaded = copy("load", str(file))
    assert loaded.exit_code == 0, loaded.output
    assert copy("dump").stdout == original
    assert copy.json("summary") == plant.json("summary")


def test_dump_json_reports_what_it_wrote(plant: PlantCli, tmp_path: Path) -> None:
    file = tmp_path / "empty.json"
    result = plant("dump", "-o", str(file), "--json")
    assert result.exit_code == 0
    report = json.loads(result.stdout)
    assert report == {"written": str(file), "bytes": file.stat().st_size}
    assert json.loads(file.read_text(encoding="utf-8"))["format"] == "plantdb-bundle"


def test_dump_to_a_folder_that_is_not_there_names_the_file_asked_for(
    plant: PlantCli, tmp_path: Path
) -> None:
    file = tmp_path / "missing" / "x.json"
    result = plant("dump", "-o", str(file))
    assert result.exit_code == 1
    assert result.stderr.startswith(f"plantdb: cannot write {file}: ")
    assert ".partial" not in result.stderr


@pytest.mark.parametrize(
    "args",
    [
        [],
        ["nonsense"],
        ["load"],
        ["load", "a.json", "b.json"],
        ["dump", "--bogus"],
        ["summary", "--db"],
        ["dump", "-o"],
        ["load", "DIRECTORY"],
    ],
    ids=[
        "no-command",
        "unknown-command",
        "missing-file",
        "two-files",
        "unknown-option",
        "db-without-url",
        "output-without-file",
        "directory",
    ],
)
def test_usage_errors_exit_2(args: list[str], tmp_path: Path) -> None:
    argv = [str(tmp_path) if arg == "DIRECTORY" else arg for arg in args]
    result = _invoke(*argv, env={ENV_URL: f"sqlite:///{tmp_path / 'unused.sqlite'}"})
    assert result.exit_code == 2, result.output
    # click prints the usage, or for a bare option one line naming what it lacks.
    assert result.output.startswith(("Usage:", "Error:")) or "\nError: " in result.output
    assert not (tmp_path / "unused.sqlite").exists()


@pytest.mark.parametrize(
    ("url", "message"),
    [
        ("not a url", "not a database URL: 'not a url'"),
        ("nonsense://somewhere", "cannot use database nonsense://somewhere"),
        ("sqlite:////no/such/folder/plant.sqlite", "no such folder for the database file"),
        ("NOT-A-DATABASE", "database error: file is not a database"),
        ("postgresql+psycopg://nobody@127.0.0.1:1/plant", "cannot open the database"),
    ],
    ids=["garbage", "unknown-dialect", "missing-folder", "not-a-database", "no-server"],
)
def test_a_bad_database_is_one_clear_line(url: str, message: str, tmp_path: Path) -> None:
    if url == "NOT-A-DATABASE":
        text_file = tmp_path / "notes.txt"
        text_file.write_text("a plain text file, not a database\n" * 200, encoding="utf-8")
        url = f"sqlite:///{text_file}"
    for command in (["summary"], ["dump"], ["init"]):
        result = _invoke(*command, "--db", url)
        assert result.exit_code == 1, (command, result.output)
        assert result.stdout == ""
        assert result.stderr.startswith("plantdb: ") and message in result.stderr, result.stderr


def test_a_missing_database_file_is_not_created_by_a_refusal(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'typo.sqlite'}"
    for command in (["summary"], ["dump"], ["demo"]):
        result = _invoke(*command, "--db", url)
        assert result.exit_code == 1
        assert "typo.sqlite is not initialised; run `plantdb init` first" in result.stderr
    assert list(tmp_path.iterdir()) == []
