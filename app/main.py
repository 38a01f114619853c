"""The FastAPI application: routers, static files, error pages."""

import importlib
import pkgutil

from fastapi import APIRouter, Depends, FastAPI, Request
from fastapi.staticfiles import StaticFiles
from starlette.exceptions import HTTPException as StarletteHTTPException
from starlette.responses import Response

import app.routes
from app.access.setup import install_access
from app.db.tracking import install_tracking
from app.lifecycle import server_lifespan
from app.routes.deps import check_path_ids
from app.routes.rendering import is_htmx, render
from app.services.study.conflicts import DeletedSinceError
from app.services.study.stored_results import install_stored_results
from app.services.study.tree import NotFoundError
from app.settings import PROJECT_ROOT, Settings, get_settings


def discover_routers() -> list[APIRouter]:
    """Every `router` defined by a module of app.routes or its area packages, in name order."""
    routers = []
    found = pkgutil.walk_packages(app.routes.__path__, prefix="app.routes.")
    for module_info in sorted(found, key=lambda m: m.name):
        module = importlib.import_module(module_info.name)
        if isinstance(getattr(module, "router", None), APIRouter):
            routers.append(module.router)
    return routers


def create_app(settings: Settings | None = None) -> FastAPI:
    """Build the app; the database must already be migrated (`make run` does it)."""
    install_tracking()
    install_stored_results()
    # No docs page: it would load its scripts from a CDN. /openapi.json stays.
    application = FastAPI(title="Tallyroom", docs_url=None, redoc_url=None,
                          lifespan=server_lifespan)
    install_access(application, settings or get_settings())
    # After the access checks: who may ask is settled before the path's ids are read.
    application.router.dependencies.append(Depends(check_path_ids))
    application.mount("/static", StaticFiles(directory=PROJECT_ROOT / "static"), name="static")
    for router in discover_routers():
        application.include_router(router)
    application.add_exception_handler(NotFoundError, _not_found)
    application.add_exception_handler(DeletedSinceError, _deleted_since)
    application.add_exception_handler(StarletteHTTPException, _http_error)
    return application


def _not_found(request: Request, exc: Exception) -> Response:
    return render(request, "error.html", {"status": 404, "message": str(exc)}, status_code=404)


def _deleted_since(request: Request, exc: Exception) -> Response:
    """An edit of a row someone deleted: who and when, in the form's place for htmx (409)."""
    assert isinstance(exc, DeletedSinceError)
    if request.method in ("GET", "HEAD"):
        return render(request, "error.html", {"status": 404, "message": exc.gone.sentence},
                      status_code=404)
    return render(request, "error.html", {"status": 409, "message": str(exc)},
                  status_code=409, block="message" if is_htmx(request) else None)


def _http_error(request: Request, exc: Exception) -> Response:
    assert isinstance(exc, StarletteHTTPException)
    return render(request, "error.html", {"status": exc.status_code, "message": exc.detail},
                  status_code=exc.status_code)
