"""The ``siting`` command line: thin wrappers that parse, call the library and print."""

from __future__ import annotations

import typer

from siting.allocator import keep_freed_memory
from siting.cli import cad, commands, shield

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help=(
        "Plan where strong magnets, coils and heavy-current cables can go in a building. "
        "Results are planning estimates, to be confirmed by the site's qualified MR physicist / "
        "MR safety expert, the supplier's site data and local codes and regulation."
    ),
)
commands.register(app)
cad.register(app)
shield.register(app)


def main() -> None:  # console-script entry point
    keep_freed_memory()  # a process of our own: reuse freed memory (siting.allocator)
    app()
