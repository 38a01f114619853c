"""The server warms up before its first request, so no request pays for a start-up cost."""

import gc

from fastapi.testclient import TestClient

from app.routes.rendering import templates


def test_every_template_is_compiled_and_the_start_frozen_while_the_server_serves(
    client: TestClient,
) -> None:
    # The `client` fixture's app has run its start (the lifespan) and serves until the test ends.
    names = templates.env.list_templates(extensions=["html"])
    cached = {key[1] for key in templates.env.cache}  # type: ignore[union-attr]
    assert len(names) > 50 and set(names) <= cached
    assert templates.env.auto_reload is False
    # The start's objects sit outside the collector: a full collection does not walk them.
    assert gc.get_freeze_count() > 10_000
