"""The FastAPI application: routers, static files, error pages."""

import importlib
import pkgutil

from fastapi import APIRouter, Depends, FastAPI
from fastapi.exceptions import RequestValidationError
from fastapi.staticfiles import StaticFiles
from sqlalchemy.exc import OperationalError
from starlette.exceptions import HTTPException as StarletteHTTPException

import app.routes
from app.access.setup import install_access
from app.db.tracking import install_tracking
from app.idle_collection import ActivityTracker
from app.lifecycle import server_lifespan
from app.routes import errors
from app.routes.deps import check_path_ids
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
    # Outermost: a request counts as in flight from its first byte to its last.
    application.add_middleware(ActivityTracker)
    # After the access checks: who may ask is settled before the path's ids are read.
    application.router.dependencies.append(Depends(check_path_ids))
    application.mount("/static", StaticFiles(directory=PROJECT_ROOT / "static"), name="static")
    for router in discover_routers():
        application.include_router(router)
    # A page in the app's style for a browser, JSON for API clients (app/routes/errors.py).
    application.add_exception_handler(NotFoundError, errors.not_found)
    application.add_exception_handler(DeletedSinceError, errors.deleted_since)
    application.add_exception_handler(StarletteHTTPException, errors.http_error)
    application.add_exception_handler(RequestValidationError, errors.invalid_input)
    application.add_exception_handler(OperationalError, errors.database_busy)
    return application
