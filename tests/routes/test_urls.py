"""path_for (the one URL builder) gives exactly the framework's path for every named route it
is asked for, whatever order the route's parameters come in and however often it is asked."""

from types import SimpleNamespace
from typing import Any

import pytest

from app.main import create_app
from app.routes.urls import path_for

# (route name, parameters): parameters listed in the path's order and out of it.
ROUTES = [
    ("read_worksheet", {"study_id": 3, "node_id": 17}),
    ("read_worksheet", {"node_id": 17, "study_id": 3}),
    ("update_step_value", {"study_id": 12, "step_id": 9}),
    ("read_step_details", {"step_id": 1, "study_id": 1000}),
    ("read_room_live", {"study_id": 42}),
    ("read_study", {"study_id": 5}),
]


@pytest.mark.parametrize(("name", "params"), ROUTES)
def test_path_for_equals_the_frameworks_path(name: str, params: dict[str, Any]) -> None:
    app = create_app()
    request: Any = SimpleNamespace(app=app)
    expected = str(app.url_path_for(name, **params))
    assert path_for(request, name, **params) == expected
    assert path_for(request, name, **params) == expected  # from the remembered template
    swapped = {key: value + 1 for key, value in params.items()}
    assert path_for(request, name, **swapped) == str(app.url_path_for(name, **swapped))


def test_a_value_that_is_no_path_segment_is_left_to_the_framework() -> None:
    app = create_app()
    request: Any = SimpleNamespace(app=app)
    with pytest.raises(AssertionError):
        path_for(request, "read_study", study_id="a/b")
