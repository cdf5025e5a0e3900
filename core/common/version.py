"""The installed version of Bandsmith, read from the package metadata."""

from __future__ import annotations

__all__ = ["installed_version"]


def installed_version() -> str | None:
    """The version pip installed (``"0.1.0"``), or None when run from a source tree never installed."""
    from importlib import metadata  # here: only --version and the About page ask, not every command

    try:
        return metadata.version("bandsmith")
    except metadata.PackageNotFoundError:
        return None
