"""Package data: the one way code finds files shipped with rowcast, and the bundled demo patterns.

Data lives in packages and is found with :mod:`importlib.resources`, never by a path relative to the
checkout, so an editable checkout and an installed wheel behave the same. ``patterns/`` and
``firmware_stub/`` stay at the top of the repository and are mapped into the packages at build time
(``pyproject.toml``: ``composer.patterns`` and ``transport.firmware_stub``)::

    data_path("composer.patterns", "profiles")      # the bundled profiles folder
    data_path("transport", "PROTOCOL.md")           # a file beside a package's modules

A demo pattern is named by its file name without ``.rowcast.toml`` (``workshop-open``), and that name is
accepted wherever a pattern file is (:func:`resolve_pattern_ref`).
"""
from __future__ import annotations

from importlib import resources
from pathlib import Path

from .errors import InputError, did_you_mean

__all__ = ["data_path", "PATTERNS_DIR", "DEMO_PATTERN", "DEMO_SUFFIX", "demo_patterns", "bundled_demos",
           "bundled_demo", "resolve_pattern_ref"]

DEMO_SUFFIX = ".rowcast.toml"


def data_path(package: str, *parts: str) -> Path:
    """A file or folder shipped inside ``package``, as a real path on the file system.

    pip and pipx install wheels unpacked, so this is the file itself; an install that keeps packages
    in a zip archive cannot run make or open profiles by path, and says so.
    """
    found = resources.files(package).joinpath(*parts)
    if not isinstance(found, Path):
        raise InputError(f"rowcast's data {package}/{'/'.join(parts)} is inside an archive; "
                         "install rowcast with pip or pipx (unpacked)")
    return found


PATTERNS_DIR = data_path("composer.patterns")
DEMO_PATTERN = PATTERNS_DIR / "workshop-open.rowcast.toml"


def demo_patterns() -> list[Path]:
    return sorted(PATTERNS_DIR.glob("*" + DEMO_SUFFIX))


def bundled_demos() -> dict[str, Path]:
    """Demo name (file name without ``.rowcast.toml``) -> file, sorted by name."""
    return {p.name[: -len(DEMO_SUFFIX)]: p for p in demo_patterns()}


def bundled_demo(name: str) -> Path | None:
    return bundled_demos().get(name)


def _looks_like_path(text: str) -> bool:
    return "/" in text or "\\" in text or text.endswith(".toml")


def resolve_pattern_ref(ref: str | Path) -> Path:
    """A pattern file, or a bundled demo given by name. An existing file always wins over a demo."""
    path = Path(ref)
    text = str(ref)
    if isinstance(ref, Path) or _looks_like_path(text) or path.exists():
        return path
    demo = bundled_demo(text)
    if demo is not None:
        return demo
    names = bundled_demos()
    raise InputError(f'no pattern file "{text}" and no bundled demo of that name{did_you_mean(text, names)}; '
                     f'demos: {", ".join(names)} (rowcast demos)')
