"""The engine never imports Qt, and the CLI's start path stays light."""

import json
import pkgutil
import subprocess
import sys

import contactplan

HEAVY = ["PySide6", "pyqtgraph", "scipy", "astropy", "matplotlib", "reportlab", "openpyxl", "itur"]


def _modules_loaded_after(code: str) -> set:
    proc = subprocess.run(
        [sys.executable, "-c", code + "\nimport sys, json; print(json.dumps(sorted(sys.modules)))"],
        capture_output=True, text=True,
    )
    assert proc.returncode == 0, proc.stderr[-2000:]
    return set(json.loads(proc.stdout.strip().splitlines()[-1]))


def test_engine_modules_do_not_import_qt():
    names = [m.name for m in pkgutil.walk_packages(contactplan.__path__, "contactplan.")
             if not m.name.startswith("contactplan.app") and not m.name.endswith("__main__")]
    code = "import importlib\n" + "\n".join(f"importlib.import_module({n!r})" for n in names)
    loaded = _modules_loaded_after(code)
    assert not any(m == "PySide6" or m.startswith("PySide6.") or m.startswith("pyqtgraph") for m in loaded)


def test_cli_start_path_is_light():
    # Measured import costs on this machine: scipy 1.0 s, astropy.coordinates 1.15 s (see DEVELOPERS.md).
    loaded = _modules_loaded_after("import contactplan.cli\ncontactplan.cli._parser()")
    heavy = sorted({m.split(".")[0] for m in loaded} & set(HEAVY))
    assert heavy == [], f"heavy packages imported on the CLI start path: {heavy}"


def test_io_layer_only_reads_and_writes():
    """io/ never runs the pipeline or the commands, and io/exporting.py and io/xlsx.py do not import each other
    both ways (the orchestration of an export lives in commands/export.py)."""
    import ast
    from pathlib import Path

    io_dir = Path(contactplan.__file__).parent / "io"
    imports = {}
    for f in io_dir.glob("*.py"):
        names = set()
        for node in ast.walk(ast.parse(f.read_text("utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.module:
                names.add(node.module)
            elif isinstance(node, ast.Import):
                names.update(a.name for a in node.names)
        imports[f.stem] = names
        upward = sorted(n for n in names if n.startswith(("contactplan.plan", "contactplan.commands",
                                                            "contactplan.app")))
        assert upward == [], f"io/{f.name} imports {upward}"
    assert not ("contactplan.io.xlsx" in imports["exporting"] and "contactplan.io.exporting" in imports["xlsx"])
