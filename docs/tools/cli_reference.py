"""Print the command-line reference (docs/cli.md) from the commands' own --help.

Run `make docs` after adding or changing a command or option; tests/unit/test_docs.py fails
while docs/cli.md differs from what this prints. Pure Python: it imports `plantdb.cli` and
walks the click group, nested groups (`import`, `export`) included.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Iterator
from pathlib import Path

import click

# A fixed width, so the reference reads the same whatever terminal ran `make docs`.
HELP_WIDTH = 88
PROGRAM = "plantdb"

HEADER = """\
# Command-line reference

Generated from each command's `--help` by `docs/tools/cli_reference.py`; do not edit by
hand. After adding or changing a command or an option, run `make docs`
(`tests/unit/test_docs.py` fails until this file matches the commands).

Every command takes `--db URL` (default: `$PLANTDB_DATABASE_URL`, else `./plantdb.sqlite`)
and `--json`; both may also be given before the command name (`plantdb --db URL trace ...`).
Exit status: 0 done, 1 refused (one line on standard error naming what and where), 2 a usage
error. The outside interface is summarised in [interface.md](interface.md).
"""


def _root_context(group: click.Group) -> click.Context:
    return click.Context(
        group,
        info_name=PROGRAM,
        terminal_width=HELP_WIDTH,
        max_content_width=HELP_WIDTH,
        **group.context_settings,
    )


def walk(
    command: click.Command, context: click.Context
) -> Iterator[tuple[str, click.Command, click.Context]]:
    """(full name, command, its context) for `command` and every command under it, sorted."""
    yield context.command_path, command, context
    if isinstance(command, click.Group):
        for name in command.list_commands(context):
            child = command.get_command(context, name)
            if child is None or child.hidden:
                continue
            yield from walk(child, click.Context(child, info_name=name, parent=context))


def _anchor(full_name: str) -> str:
    # GitHub-style heading anchors: lower case, spaces to hyphens, other punctuation dropped.
    kept = [c for c in full_name.lower().replace(" ", "-") if c.isalnum() or c in "-_"]
    return "".join(kept)


def reference(group: click.Group) -> str:
    """The whole reference as markdown: a contents table, then each command's help."""
    entries = list(walk(group, _root_context(group)))
    lines = [HEADER, "| command | what it does |", "| --- | --- |"]
    for full_name, command, _context in entries[1:]:
        summary = command.get_short_help_str(limit=200).replace("|", "\\|")
        lines.append(f"| [`{full_name}`](#{_anchor(full_name)}) | {summary} |")
    for full_name, command, context in entries:
        help_text = command.get_help(context).rstrip()
        lines += ["", f"## {full_name}", "", "```text", help_text, "```"]
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> None:
    """Print the reference, or write it to a file with -o (replaced only once complete)."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("-o", "--output", type=Path, help="write here instead of stdout")
    args = parser.parse_args(argv)
    from plantdb.cli import cli

    text = reference(cli)
    if args.output is None:
        sys.stdout.write(text)
        return
    partial = args.output.with_name(args.output.name + ".partial")
    partial.write_text(text, encoding="utf-8")
    partial.replace(args.output)


if __name__ == "__main__":
    main()
