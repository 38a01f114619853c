"""The README is checked: its two commands exist and every page it names is served."""

import re

from fastapi.routing import APIRoute

from app.main import create_app
from app.routes.rendering import CAUTIONS
from app.settings import PROJECT_ROOT

README = (PROJECT_ROOT / "README.md").read_text(encoding="utf-8")
MAKEFILE = (PROJECT_ROOT / "Makefile").read_text(encoding="utf-8")


def _route_patterns() -> list[re.Pattern[str]]:
    app = create_app()
    paths = {route.path for route in app.routes if hasattr(route, "path")}
    for route in app.router.routes:
        for inner in getattr(getattr(route, "original_router", None), "routes", []):
            if isinstance(inner, APIRoute):
                paths.add(inner.path)
    return [re.compile("^" + re.sub(r"\{[^}]+\}", "[^/]+", path) + "$") for path in paths]


def test_the_readme_opens_with_the_two_set_up_commands_and_the_makefile_has_them() -> None:
    assert README.index("make run") < README.index("## A short tour")
    assert "make test" in README
    assert re.search(r"^run:", MAKEFILE, re.M) and re.search(r"^test:", MAKEFILE, re.M)


def test_every_page_the_readme_names_is_served() -> None:
    named = set(re.findall(r"`(/[^`\s]*)`", README))
    assert len(named) >= 8
    patterns = _route_patterns()
    unserved = [p for p in named if not any(rx.match(p.split("?")[0]) for rx in patterns)]
    assert unserved == []


def test_the_readme_carries_the_cautions_the_app_shows() -> None:
    assert "decision support for a competent review team" in README
    assert "only as good as the" in README and "inputs the team agrees" in README
    assert "decision support for a competent review team" in CAUTIONS


def test_make_clean_never_deletes_the_database_or_its_backups() -> None:
    from app.db.backups import backups_folder, sqlite_file
    from app.settings import DEFAULT_DATABASE_URL

    database = sqlite_file(DEFAULT_DATABASE_URL)
    assert database is not None and backups_folder(database) == PROJECT_ROOT / "data" / "backups"
    recipe = re.search(r"^clean:.*\n((?:\t.*\n)+)", MAKEFILE, re.M)
    assert recipe is not None
    removed = recipe.group(1).split()
    assert not any(word.rstrip("/") in ("data", "data/backups", "*", ".") for word in removed)
    assert "data/backups/" in README and "`make clean`" in README
