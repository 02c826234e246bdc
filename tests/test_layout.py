"""The house layout: pyproj only in crs.py, ezdxf only in the DXF writer,
typer only in the CLI, and the alignment free of all three."""

import ast
from pathlib import Path

PKG = Path(__file__).resolve().parent.parent / "stakeout"


def _imports(path: Path) -> set[str]:
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out |= {a.name.split(".")[0] for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            out.add(node.module.split(".")[0])
    return out


def test_heavy_libraries_stay_in_their_modules():
    owners = {"pyproj": {"crs.py"}, "ezdxf": {"dxf.py"}, "typer": {"cli.py"}, "matplotlib": {"dxf.py"}}
    for path in PKG.rglob("*.py"):
        for lib, allowed in owners.items():
            if lib in _imports(path):
                assert path.name in allowed, f"{path.relative_to(PKG)} imports {lib}"


def test_writers_do_not_import_the_cli():
    for path in (PKG / "writers").glob("*.py"):
        src = path.read_text(encoding="utf-8")
        assert "from ..cli" not in src and "import stakeout.cli" not in src


def test_every_module_declares_all():
    for path in PKG.rglob("*.py"):
        if path.name in ("__init__.py",) and path.parent.name == "writers":
            continue
        assert "__all__" in path.read_text(encoding="utf-8"), path
