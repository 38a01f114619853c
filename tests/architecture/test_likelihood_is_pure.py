"""The likelihood package is pure: importing all of it loads no web, database or template code."""

import json
import pkgutil
import subprocess
import sys
from pathlib import Path

import app.likelihood

REPO_ROOT = Path(__file__).resolve().parents[2]
FORBIDDEN = ("fastapi", "starlette", "sqlalchemy", "sqlmodel", "jinja2", "pydantic", "alembic")

IMPORT_ALL_AND_LIST_MODULES = """
import importlib, json, sys
for name in json.loads(sys.argv[1]):
    importlib.import_module(name)
print(json.dumps(sorted(sys.modules)))
"""


def likelihood_module_names() -> list[str]:
    found = pkgutil.iter_modules(app.likelihood.__path__, prefix="app.likelihood.")
    return ["app.likelihood", *(module.name for module in found)]


def test_the_package_has_the_modules_the_app_codes_against():
    expected = {"types", "frequency", "sil", "conversions", "numbers", "proof_test", "typical"}
    names = {name.removeprefix("app.likelihood.") for name in likelihood_module_names()}
    assert expected | {"checks"} <= names


def test_importing_every_module_loads_no_web_database_or_template_package():
    names = likelihood_module_names()
    completed = subprocess.run(
        [sys.executable, "-c", IMPORT_ALL_AND_LIST_MODULES, json.dumps(names)],
        cwd=REPO_ROOT,
        env={"PYTHONPATH": str(REPO_ROOT)},
        capture_output=True,
        text=True,
        check=True,
    )
    loaded = json.loads(completed.stdout)
    assert set(names) <= set(loaded)
    leaked = [name for name in loaded if name.split(".")[0] in FORBIDDEN]
    assert leaked == []
