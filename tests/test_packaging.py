"""Desktop integration files and the PyInstaller spec are well formed."""

import configparser
import shutil
import subprocess
from pathlib import Path

import pytest
from defusedxml import ElementTree

ROOT = Path(__file__).resolve().parents[1]
LINUX = ROOT / "packaging" / "linux"
APP_ID = "app.contactplan.Planner"


def test_desktop_entry_keys():
    # Source: freedesktop.org Desktop Entry Specification 1.5 (required keys Type, Name; Exec for Application).
    cp = configparser.ConfigParser(interpolation=None)
    cp.optionxform = str
    cp.read(LINUX / f"{APP_ID}.desktop")
    entry = cp["Desktop Entry"]
    assert entry["Type"] == "Application"
    assert entry["Exec"].split()[0] == "contactplan"
    assert entry["Icon"] == APP_ID
    assert entry["Categories"].endswith(";")


@pytest.mark.skipif(shutil.which("desktop-file-validate") is None, reason="desktop-file-utils not installed")
def test_desktop_entry_validates():
    subprocess.run(["desktop-file-validate", str(LINUX / f"{APP_ID}.desktop")], check=True)


def test_metainfo_required_elements():
    # Source: AppStream specification, desktop-application component (id, name, summary, metadata_license).
    root = ElementTree.parse(LINUX / f"{APP_ID}.metainfo.xml").getroot()
    assert root.get("type") == "desktop-application"
    assert root.findtext("id") == APP_ID
    for tag in ("name", "summary", "metadata_license", "project_license", "description"):
        assert root.find(tag) is not None, tag
    assert root.find("launchable").text == f"{APP_ID}.desktop"
    assert "flight-dynamics" in "".join(root.find("description").itertext())


@pytest.mark.skipif(shutil.which("appstreamcli") is None, reason="appstream not installed")
def test_metainfo_validates():
    subprocess.run(["appstreamcli", "validate", "--no-net", str(LINUX / f"{APP_ID}.metainfo.xml")], check=True)


def test_icons_present_at_every_size():
    from contactplan.paths import icon_path

    assert icon_path().read_text().lstrip().startswith("<?xml")
    for size in (16, 32, 48, 64, 128, 256):
        data = icon_path(size).read_bytes()
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
        # PNG IHDR: width and height as big-endian 32-bit ints at bytes 16..24 (PNG specification, ISO/IEC 15948).
        assert int.from_bytes(data[16:20], "big") == size and int.from_bytes(data[20:24], "big") == size


def test_pyinstaller_spec_bundles_the_offline_data():
    spec = (ROOT / "packaging" / "contactplan.spec").read_text()
    for needed in ("skyfield_data", "astropy_iers_data", "resources"):
        assert needed in spec
    compile(spec, "contactplan.spec", "exec")


def test_make_run_names_the_debian_packages_of_missing_qt_libraries():
    """The Qt platform check reads ldd's output (format of glibc's ldd) and names every package."""
    import importlib.util
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    spec = importlib.util.spec_from_file_location("qt_libs", root / "packaging" / "qt_libs.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    ldd = ("\tlibxcb-cursor.so.0 => /lib/x86_64-linux-gnu/libxcb-cursor.so.0 (0x00007f7e0bc09000)\n"
           "\tlibxcb-icccm.so.4 => not found\n\tlibxcb-keysyms.so.1 => not found\n"
           "\tlibxcb-icccm.so.4 => not found\n\tlibweird.so.9 => not found\n")
    missing = mod.missing_in(ldd)
    assert missing == ["libxcb-icccm.so.4", "libxcb-keysyms.so.1", "libweird.so.9"]
    assert mod.packages_for(missing) == (["libxcb-icccm4", "libxcb-keysyms1"], ["libweird.so.9"])
    readme = (root / "README.md").read_text("utf-8")
    assert all(p in readme for p in ("libxcb-icccm4", "libxcb-keysyms1", "libxcb-cursor0"))
    assert "packaging/qt_libs.py" in (root / "Makefile").read_text("utf-8")
