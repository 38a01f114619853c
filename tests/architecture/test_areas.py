"""Service areas import the shared core (app.services.study), not each other.

The exceptions below are the only cross-area imports; DEVELOPERS.md ("Areas") names each with
its reason. A new cross-area import fails here until it is named in both places.
"""

import ast
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
SERVICES = REPO_ROOT / "app" / "services"
CORE = "study"
AREAS = {"study", "worksheet", "record", "risk", "exchange", "estimates"}

# (importing area, imported module) → why
NAMED_EXCEPTIONS = {
    ("worksheet", "app.services.risk.ipl_checks"): "the worksheet shows each scenario's warnings",
    ("exchange", "app.services.worksheet.ladder"): "the report draws each scenario's ladder",
    ("exchange", "app.services.risk.picture"): "the report includes the risk picture",
    ("exchange", "app.services.risk.charts"): "the report's gap chart: the largest gaps on the "
                                              "whole study's axis",
    ("exchange", "app.services.risk.ipl_checks"): "the report lists each scenario's warnings",
    ("record", "app.services.exchange.study_file"): "a revision is a frozen study file",
    ("record", "app.services.exchange.export_csv"): "the change log downloads through the one "
                                                    "CSV writer",
    ("record", "app.services.exchange.export_tables"): "the CSV writer's table and cell types",
}


def imported_modules(path: Path) -> set[str]:
    """Every app.services module a file imports (absolute imports only; the app uses no others)."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(), filename=str(path))):
        if isinstance(node, ast.ImportFrom) and node.module:
            found.add(node.module)
            found.update(f"{node.module}.{alias.name}" for alias in node.names)
        elif isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
    return {name for name in found if name.startswith("app.services.")}


def area_of(module: str) -> str | None:
    parts = module.split(".")
    return parts[2] if len(parts) > 2 and parts[2] in AREAS else None


def cross_area_imports() -> set[tuple[str, str]]:
    """(importing area, imported module) for every import that leaves the area and the core."""
    crossings = set()
    for path in SERVICES.glob("*/*.py"):
        own = path.parent.name
        for name in imported_modules(path):
            module = ".".join(name.split(".")[:4])  # app.services.<area>.<module>
            other = area_of(module)
            if other not in (None, own, CORE) and module.count(".") == 3:
                crossings.add((own, module))
    return crossings


def test_every_service_module_sits_in_an_area() -> None:
    loose = [p.name for p in SERVICES.glob("*.py") if p.name != "__init__.py"]
    assert loose == []
    assert {p.name for p in SERVICES.iterdir() if p.is_dir() and p.name != "__pycache__"} == AREAS


def test_areas_import_only_the_core_and_the_named_exceptions() -> None:
    unexpected = cross_area_imports() - set(NAMED_EXCEPTIONS)
    assert unexpected == set(), "name the exception in DEVELOPERS.md and this test, or move it"


def test_the_core_imports_no_area() -> None:
    core_imports = {module for path in (SERVICES / CORE).glob("*.py")
                    for module in imported_modules(path)}
    assert {area_of(m) for m in core_imports} <= {CORE, None}


def test_every_named_exception_is_still_used() -> None:
    assert set(NAMED_EXCEPTIONS) <= cross_area_imports()


def test_a_cross_area_import_is_caught(tmp_path: Path) -> None:
    probe = tmp_path / "probe.py"
    probe.write_text("from app.services.record.actions import add_action\n")
    assert area_of("app.services.record.actions") == "record"
    assert imported_modules(probe) == {"app.services.record.actions",
                                       "app.services.record.actions.add_action"}
