"""The house layout: pyproj only in crs.py, ezdxf only in the DXF writer,
typer only in the CLI, and the alignment free of all three."""

import ast
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parent.parent / "stakeout"


def _imports(path: Path) -> set[str]:
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out |= {a.name.split(".")[0] for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            out.add(node.module.split(".")[0])
    return out


@pytest.mark.slow
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


def _sources():
    for path in PKG.rglob("*.py"):
        yield path, path.read_text(encoding="utf-8")


def test_writers_import_neither_the_pipeline_nor_the_reader():
    # writers read the Design; they never reach back into the job file or the pipeline
    for path in (PKG / "writers").glob("*.py"):
        mods = {node.module for node in ast.walk(ast.parse(path.read_text(encoding="utf-8")))
                if isinstance(node, ast.ImportFrom) and node.module}
        assert not mods & {"pipeline", "jobfile", "outputs"}, f"{path.name} imports {mods}"


def test_imports_flow_one_way():
    # job file -> alignment -> staking -> design -> writers -> CLI: nothing looks back up the chain
    later = {
        "alignment": ("jobfile", "design", "writers", "pipeline", "outputs", "cli", "staking", "setout"),
        "job.py": ("jobfile", "design", "writers", "pipeline", "outputs", "cli"),
        "jobfile": ("design", "writers", "pipeline", "outputs", "cli", "staking"),
        "design.py": ("writers", "pipeline", "cli", "jobfile"),
        "outputs.py": ("pipeline", "cli"),
        "presentation.py": ("writers", "pipeline", "outputs", "cli", "jobfile"),
    }
    for path, src in _sources():
        rel = path.relative_to(PKG).as_posix()
        for owner, banned in later.items():
            if rel == owner or rel.startswith(owner + "/"):
                for node in ast.walk(ast.parse(src)):
                    if isinstance(node, ast.ImportFrom) and node.module and node.level:
                        # resolve the relative import to its top-level module inside the package
                        parts = rel.split("/")[:-1]
                        base = parts[: len(parts) - (node.level - 1)]
                        first = (base + node.module.split("."))[0]
                        assert first not in banned, f"{rel} imports {node.module}"


def test_no_branching_on_element_kind_by_name():
    # the element module owns the kinds; everyone else uses the protocol or a table keyed by class
    for path, src in _sources():
        if path.name == "elements.py" or path.parent.name == "jobfile":  # the reader reads `kind` keys
            continue
        for bad in ('"arc" in', '"line" in', '"spiral" in',
                    *(f'{op} "{k}"' for op in ("==", "!=") for k in ("arc", "line", "spiral"))):
            assert bad not in src, f"{path.relative_to(PKG)} branches on an element kind: {bad!r}"


def test_every_station_label_comes_from_the_stationing():
    # station text is formatted in stations.py only (Stationing.label/labels/format_value); the
    # vectorised CSV rows format the stationing's own values with its station length and decimals
    for path, src in _sources():
        if path.name == "stations.py":
            continue
        for bad in ("format_station(", "station_text("):
            assert bad not in src, f"{path.relative_to(PKG)} formats stations itself: {bad!r}"
        if "rows.station(" in src:  # the CSV rows; the text sheets' labels (text.station_labels)
            assert (path.name == "tables.py" and "sp.stationing" in src) or \
                (path.name == "text.py" and "stationing.station_length" in src)


def test_only_help_lists_every_output():
    from stakeout.outputs import OUTPUTS, only_help

    assert all(o.name in only_help() for o in OUTPUTS)


def test_ruff_clean():
    import shutil
    import subprocess
    import sys

    ruff = shutil.which("ruff", path=str(Path(sys.executable).parent)) or shutil.which("ruff")
    assert ruff is not None, "ruff is not installed (pip install -e '.[test]' brings it)"
    r = subprocess.run([ruff, "check", "stakeout", "tests", "benchmarks"], cwd=PKG.parent, capture_output=True,
                       text=True)
    assert r.returncode == 0, r.stdout + r.stderr


def test_xml_only_in_the_landxml_package():
    # the LandXML package (stakeout/landxml/) is the only place that parses or writes XML
    for path in PKG.rglob("*.py"):
        rel = path.relative_to(PKG).as_posix()
        names = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                names |= {a.name for a in node.names}
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names.add(node.module)
        xml = {n for n in names if n.split(".")[0] in ("xml", "defusedxml", "lxml")}
        assert not xml or rel.startswith("landxml/"), f"{rel} imports {sorted(xml)}"


def test_every_element_class_has_an_export_entry():
    # the LandXML export (stakeout/exported.py) writes each kind by a PerKind table; a kind missing
    # there must not become a LandXML <Line>
    import inspect

    from stakeout.alignment import elements
    from stakeout.exported import EXPORT

    classes = {c for _, c in inspect.getmembers(elements, inspect.isclass)
               if issubclass(c, elements.Element) and c is not elements.Element}
    assert classes and classes <= set(EXPORT.classes), classes - set(EXPORT.classes)


#: The writers that render outputs; the others (text, rows, folder, checkwords) are toolkits
#: any writer may use.  A renderer never imports another renderer, nor stakeout.alignment: what it
#: shows comes from stakeout.presentation (see its docstring).
RENDERERS = {"tables", "sheets", "report", "checkreport", "html", "dxf", "picture", "profile_picture", "exchange",
             "manifest", "control", "superelevation"}
#: Writers still importing the element classes (none: the LandXML export's records come from
#: stakeout.exported through the presentation model).
PENDING_ALIGNMENT_IMPORTS: set[str] = set()


def _writer_imports(path: Path) -> set[tuple[str, ...]]:
    """Modules a file under writers/ imports, as package paths (``("writers", "text")``)."""
    rel = path.relative_to(PKG).with_suffix("").parts
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.level:
            base = list(rel[:len(rel) - node.level])
            mod = tuple(base + (node.module.split(".") if node.module else []))
            out.add(mod)
            if not node.module:  # from . import rows
                out |= {mod + (a.name,) for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("stakeout."):
            out.add(tuple(node.module.split(".")[1:]))
        elif isinstance(node, ast.Import):
            out |= {tuple(a.name.split(".")[1:]) for a in node.names if a.name.startswith("stakeout.")}
    return out


def test_no_renderer_imports_another_renderer_or_the_alignment():
    for path in (PKG / "writers").rglob("*.py"):
        rel = path.relative_to(PKG / "writers").with_suffix("").parts
        own = rel[0]
        for mod in _writer_imports(path):
            if mod[:1] == ("writers",) and len(mod) > 1:
                assert mod[1] == own or mod[1] not in RENDERERS, f"writers/{'/'.join(rel)} imports {'.'.join(mod)}"
            if mod[:1] == ("alignment",) and own not in PENDING_ALIGNMENT_IMPORTS:
                raise AssertionError(f"writers/{'/'.join(rel)} imports stakeout.{'.'.join(mod)}: use "
                                     "stakeout.presentation")


def test_no_isinstance_on_element_classes_outside_the_alignment():
    # an element kind is dispatched through a PerKind table (stakeout/alignment/kinds.py), which
    # fails loudly on a kind it does not know; isinstance(x, Arc) elsewhere would not
    kinds = {"Line", "Arc", "Spiral", "Element"}
    for path, src in _sources():
        rel = path.relative_to(PKG).as_posix()
        if rel.startswith("alignment/") or path.stem in PENDING_ALIGNMENT_IMPORTS:
            continue
        for node in ast.walk(ast.parse(src)):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "isinstance":
                names = {n.id for n in ast.walk(node.args[1]) if isinstance(n, ast.Name)} | \
                        {n.attr for n in ast.walk(node.args[1]) if isinstance(n, ast.Attribute)}
                assert not names & kinds, f"{rel}:{node.lineno} branches on an element class: use a PerKind table"
