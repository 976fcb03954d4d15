"""``gisgrade schema``: the project file's JSON Schema, for editors."""
from __future__ import annotations

import json

import click


@click.command("schema", short_help="print the project file's JSON Schema",
               help="Print the JSON Schema of the project file, so an editor can check and "
                    "complete project files (for TOML editors that read JSON Schema).\n\n\b\n"
                    "example:\n  gisgrade schema > project.schema.json")
def command():
    from ..project import project_schema

    click.echo(json.dumps(project_schema(), indent=2))
    return 0
