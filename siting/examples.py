"""Where the shipped example site files are (``rooms/`` in the source tree).

A regular install puts them in the package as ``siting.rooms`` (a folder of
data, not a Python package, so importlib.resources sees it as a namespace);
an editable install leaves them in the checkout's ``rooms/`` folder, next to
``siting/``.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def examples_dir() -> Path:
    """The folder holding the example ``*.toml`` site files."""
    try:
        for entry in files("siting.rooms").iterdir():
            if entry.name.endswith(".toml"):
                return Path(str(entry)).parent
    except (ModuleNotFoundError, FileNotFoundError):
        pass
    folder = Path(__file__).resolve().parents[1] / "rooms"
    if not any(folder.glob("*.toml")):
        raise FileNotFoundError("the example site files (rooms/) are not installed")
    return folder


def example(name: str) -> Path:
    """Path of the example ``name`` (with or without ``.toml``)."""
    path = examples_dir() / (name if name.endswith(".toml") else f"{name}.toml")
    if not path.is_file():
        raise FileNotFoundError(f"no example named {name!r} in {examples_dir()}")
    return path
