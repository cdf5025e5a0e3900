"""Files shipped with Bandsmith (demo session, icons, styles)."""

from pathlib import Path

__all__ = ["RESOURCE_DIR", "resource_path"]

RESOURCE_DIR = Path(__file__).resolve().parent


def resource_path(name: str) -> Path:
    """Absolute path of a shipped resource file."""
    return RESOURCE_DIR / name
