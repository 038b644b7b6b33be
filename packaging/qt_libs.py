"""Check, before the planner starts, that the Qt platform plugin finds its system libraries.

``make run`` calls this. Qt's own message when a library is missing names only one (and
often the wrong one, e.g. ``libxcb-cursor0`` when ``libxcb-icccm4`` is what is missing);
here ``ldd`` lists every missing library of the X11 (xcb) plugin and its Qt helper library,
and the Debian/Ubuntu packages that provide them are printed in one ``apt-get`` line.
Never imports Qt (that is what would fail). Exit status 0 when nothing is missing (or the
check cannot run: not Linux, no ldd, a Wayland-only or offscreen session), 1 otherwise.
"""

from __future__ import annotations

import importlib.util
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

#: shared library (soname) -> Debian/Ubuntu package (bookworm / 22.04 names)
DEBIAN_PACKAGES = {
    "libxcb-cursor.so.0": "libxcb-cursor0", "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1", "libxcb-image.so.0": "libxcb-image0",
    "libxcb-render-util.so.0": "libxcb-render-util0", "libxcb-randr.so.0": "libxcb-randr0",
    "libxcb-shape.so.0": "libxcb-shape0", "libxcb-xfixes.so.0": "libxcb-xfixes0",
    "libxcb-sync.so.1": "libxcb-sync1", "libxcb-shm.so.0": "libxcb-shm0", "libxcb-xkb.so.1": "libxcb-xkb1",
    "libxcb-xinerama.so.0": "libxcb-xinerama0", "libxcb-render.so.0": "libxcb-render0",
    "libxcb-util.so.1": "libxcb-util1", "libxcb.so.1": "libxcb1", "libxcb-glx.so.0": "libxcb-glx0",
    "libxcb-xinput.so.0": "libxcb-xinput0", "libX11-xcb.so.1": "libx11-xcb1", "libX11.so.6": "libx11-6",
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0", "libxkbcommon.so.0": "libxkbcommon0",
    "libEGL.so.1": "libegl1", "libGL.so.1": "libgl1", "libOpenGL.so.0": "libopengl0",
    "libfontconfig.so.1": "libfontconfig1", "libfreetype.so.6": "libfreetype6",
    "libdbus-1.so.3": "libdbus-1-3", "libglib-2.0.so.0": "libglib2.0-0", "libSM.so.6": "libsm6",
    "libICE.so.6": "libice6",
}

_NOT_FOUND = re.compile(r"^\s*(\S+)\s*=>\s*not found", re.M)


def missing_in(ldd_output: str) -> list[str]:
    """Sonames ``ldd`` could not find, in the order it lists them, each once."""
    out: list[str] = []
    for name in _NOT_FOUND.findall(ldd_output):
        if name not in out:
            out.append(name)
    return out


def packages_for(sonames) -> tuple[list[str], list[str]]:
    """(Debian packages to install, sonames with no known package)."""
    pkgs, unknown = [], []
    for s in sonames:
        p = DEBIAN_PACKAGES.get(s)
        if p is None:
            unknown.append(s)
        elif p not in pkgs:
            pkgs.append(p)
    return pkgs, unknown


def plugin_files() -> list[Path]:
    spec = importlib.util.find_spec("PySide6")  # finds the package without importing it
    if spec is None or spec.origin is None:
        return []
    qt = Path(spec.origin).parent / "Qt"
    return [p for p in (qt / "plugins" / "platforms" / "libqxcb.so", qt / "lib" / "libQt6XcbQpa.so.6")
            if p.exists()]


def main() -> int:
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    if not sys.platform.startswith("linux") or platform.startswith(("offscreen", "wayland", "minimal")):
        return 0
    ldd = shutil.which("ldd")
    files = plugin_files()
    if ldd is None or not files:
        return 0
    missing: list[str] = []
    for f in files:
        try:
            text = subprocess.run([ldd, str(f)], capture_output=True, text=True, timeout=30).stdout
        except (OSError, subprocess.SubprocessError):
            return 0
        missing += [m for m in missing_in(text) if m not in missing]
    if not missing:
        return 0
    pkgs, unknown = packages_for(missing)
    print(f"contactplan: the Qt X11 platform plugin is missing system libraries: {', '.join(missing)}.",
          file=sys.stderr)
    if pkgs:
        print(f"  On Debian or Ubuntu install them with: sudo apt-get install {' '.join(pkgs)}", file=sys.stderr)
    if unknown:
        print(f"  (find the package for {', '.join(unknown)} with your distribution's package search)",
              file=sys.stderr)
    return 1


if __name__ == "__main__":
    sys.exit(main())
