"""What every command shares: loading with clean errors, progress, cautions."""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Iterator
from pathlib import Path

import typer
from rich.console import Console
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

from siting.cautions import ACCESS_NOTE, CAUTION_TEXT
from siting.errors import SiteFileError, SitingError

CAUTION = CAUTION_TEXT  # re-exported for the commands
__all__ = ["ACCESS_NOTE", "CAUTION", "fail_invalid", "load", "progress_bar"]

EXIT_PASS, EXIT_FAIL, EXIT_INVALID = 0, 1, 2

out = Console(highlight=False, soft_wrap=True, width=160 if not sys.stdout.isatty() else None)
err = Console(stderr=True, highlight=False, soft_wrap=True)


def fail_invalid(exc: SitingError) -> typer.Exit:
    """Print a library error as one line per problem on stderr; exit status 2."""
    problems = exc.problems if isinstance(exc, SiteFileError) else [str(exc)]
    for line in problems:
        err.print(f"error: {line}", markup=False)
    return typer.Exit(EXIT_INVALID)


def load(path: Path):
    """Load and validate a site file and build its sources, translating errors."""
    from siting.site.build import build_sources
    from siting.site.loader import load_site

    try:
        site = load_site(path)
        sources = build_sources(site)
    except SitingError as exc:
        raise fail_invalid(exc) from None
    except ValueError as exc:  # a source rejected its parameters
        raise fail_invalid(SitingError(f"{path}: {exc}")) from None
    return site, sources


@contextlib.contextmanager
def progress_bar(enabled: bool = True) -> Iterator:
    """A callable(step, i, n) that drives a rich progress bar on stderr."""
    if not enabled or not sys.stderr.isatty():
        yield None
        return
    with Progress(
        TextColumn("{task.description}"),
        BarColumn(),
        TextColumn("{task.completed}/{task.total}"),
        TimeElapsedColumn(),
        console=err,
        transient=True,
    ) as bar:
        tasks: dict[str, int] = {}

        def report(step: str, i: int, n: int) -> None:
            if step not in tasks:
                tasks[step] = bar.add_task(step, total=n)
            bar.update(tasks[step], completed=i, total=n)

        yield report
