"""deploy/ stays true to the code: its commands parse, its settings exist, all are documented.

No container engine runs here, so the container recipe and the process layout are checked
for consistency instead: every ``foldline`` command line in deploy/ parses with the real
command-line parser, every ``FOLDLINE_*`` variable named there is a setting, and the
settings table in deploy/SETTINGS.md is exactly the one rendered from
:class:`service.settings.Settings` (the failure message shows the table to paste).
"""

from __future__ import annotations

import contextlib
import io
import json
import re
import shlex
from pathlib import Path

import pytest
from annotated_types import Ge, Gt, Le
from pydantic.fields import FieldInfo

from service.cli.main import build_parser
from service.settings import Settings

DEPLOY = Path(__file__).resolve().parents[2] / "deploy"
DOCS = sorted(DEPLOY.glob("*.md"))
CONTAINERFILE = DEPLOY / "Containerfile"
TABLE_START = "<!-- settings table: generated from service/settings.py -->"
TABLE_END = "<!-- end of settings table -->"
SHELL_OPERATORS = {"&&", "||", "|", ";", "&"}
TYPES = {str: "text", int: "integer", float: "number", bool: "true or false",
         str | None: "text, optional"}
BOUNDS = ((Ge, "ge", ">="), (Gt, "gt", ">"), (Le, "le", "<="))


def settings_table() -> str:
    """The Markdown table of every setting: variable, type and bounds, default, meaning."""
    rows = ["| Variable | Type | Default | Meaning |", "|---|---|---|---|"]
    for name, field in Settings.model_fields.items():
        rows.append(f"| `FOLDLINE_{name.upper()}` | {_type(field)} | {_default(field)} | "
                    f"{field.description} |")
    return "\n".join(rows)


def _type(field: FieldInfo) -> str:
    limits = [f"{symbol} {getattr(bound, name)}" for bound in field.metadata
              for kind, name, symbol in BOUNDS if isinstance(bound, kind)]
    return ", ".join([TYPES[field.annotation], *limits])


def _default(field: FieldInfo) -> str:
    if field.default_factory is not None:
        return "see below"
    if field.default is None:
        return "unset"
    return f"`{json.dumps(field.default)}`"


def foldline_commands() -> list[tuple[str, list[str]]]:
    """Every ``foldline`` command line in deploy/: (where, arguments after ``foldline``)."""
    found = []
    for path in DOCS:
        for block in re.findall(r"```sh\n(.*?)```", path.read_text(), re.S):
            for line in block.replace("\\\n", " ").splitlines():
                found += _commands_in(path.name, shlex.split(line, comments=True))
    for line in CONTAINERFILE.read_text().replace("\\\n", " ").splitlines():
        instruction, _, rest = line.partition(" ")
        if instruction in {"RUN", "CMD", "ENTRYPOINT"}:
            words = json.loads(rest) if rest.startswith("[") else shlex.split(rest)
            found += _commands_in(CONTAINERFILE.name, words)
    return found


def _commands_in(where: str, words: list[str]) -> list[tuple[str, list[str]]]:
    commands, current = [], None
    for word in words:
        if word in SHELL_OPERATORS:
            current = None
        elif current is not None:
            current.append(word)
        elif word == "foldline":
            current = []
            commands.append((where, current))
    return commands


def test_deploy_names_the_commands_each_process_runs():
    named = {" ".join(args[:2]) for _, args in foldline_commands()}

    assert {"serve", "worker", "db upgrade", "audit verify"} <= named


@pytest.mark.parametrize("where, args", foldline_commands(),
                         ids=lambda value: " ".join(value) if isinstance(value, list) else value)
def test_every_documented_command_parses(where, args):
    errors = io.StringIO()
    with contextlib.redirect_stderr(errors):
        try:
            build_parser().parse_args(args)
        except SystemExit:
            pytest.fail(f"{where}: `foldline {' '.join(args)}` does not parse: "
                        f"{errors.getvalue().strip()}")


def test_every_setting_named_in_deploy_exists():
    texts = [path.read_text() for path in [*DOCS, CONTAINERFILE]]
    # A name ending in "_" is a wildcard (FOLDLINE_MAX_*), not a setting.
    named = {name for text in texts
             for name in re.findall(r"\bFOLDLINE_([A-Z][A-Z_]*[A-Z])\b", text)}

    assert named, "deploy/ names no settings"
    assert sorted(n for n in named if n.lower() not in Settings.model_fields) == []


def test_settings_reference_is_the_table_of_every_setting():
    text = (DEPLOY / "SETTINGS.md").read_text()
    documented = text.split(TABLE_START)[1].split(TABLE_END)[0].strip()

    expected = settings_table()
    assert documented == expected, f"deploy/SETTINGS.md is out of date; its table should be\n" \
                                   f"{expected}"
