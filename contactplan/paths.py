"""Where contactplan finds its bundled resources and keeps user files."""

from __future__ import annotations

import os
import sys
from pathlib import Path


def resource_dir() -> Path:
    """The ``resources/`` folder: beside the package in a checkout, inside the bundle when frozen."""
    frozen = getattr(sys, "_MEIPASS", None)
    if frozen:
        return Path(frozen) / "resources"
    return Path(__file__).resolve().parents[1] / "resources"


def demo_scenario() -> Path:
    """The bundled demo scenario (an invented mission)."""
    return resource_dir() / "demo" / "week.toml"


def icon_path(size: int | None = None) -> Path:
    """The application icon, SVG or a PNG of the given size (16..256)."""
    icons = resource_dir() / "icons"
    return icons / ("contactplan.svg" if size is None else f"contactplan-{size}.png")


def user_data_dir() -> Path:
    """Per-user data folder (autosave, recovery) without Qt: XDG on Linux, the usual places elsewhere."""
    if sys.platform == "win32":
        base = Path(os.environ.get("LOCALAPPDATA", Path.home() / "AppData" / "Local"))
    elif sys.platform == "darwin":
        base = Path.home() / "Library" / "Application Support"
    else:
        base = Path(os.environ.get("XDG_DATA_HOME", Path.home() / ".local" / "share"))
    return base / "contactplan"


def user_log_dir() -> Path:
    """Per-user log folder."""
    if sys.platform == "win32":
        return user_data_dir() / "logs"
    if sys.platform == "darwin":
        return Path.home() / "Library" / "Logs" / "contactplan"
    return Path(os.environ.get("XDG_STATE_HOME", Path.home() / ".local" / "state")) / "contactplan" / "logs"


def user_cache_dir() -> Path:
    """Per-user cache folder (results that can be recomputed, e.g. corrected built-in orbits).

    ``CONTACTPLAN_CACHE_DIR`` overrides it (the tests point it at a temporary folder);
    otherwise XDG_CACHE_HOME on Linux, ~/Library/Caches on macOS, %LOCALAPPDATA% on Windows.
    """
    override = os.environ.get("CONTACTPLAN_CACHE_DIR")
    if override:
        return Path(override)
    if sys.platform == "win32":
        return Path(os.environ.get("LOCALAPPDATA", Path.home() / "AppData" / "Local")) / "contactplan" / "cache"
    if sys.platform == "darwin":
        return Path.home() / "Library" / "Caches" / "contactplan"
    return Path(os.environ.get("XDG_CACHE_HOME") or (Path.home() / ".cache")) / "contactplan"
