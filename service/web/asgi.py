"""ASGI entry point for servers: `uvicorn service.web.asgi:app --factory` (and `bandgate serve`)."""

import gc

from fastapi import FastAPI

from service.web.app import create_app


def ready_to_serve(app: FastAPI) -> FastAPI:
    """Collect once, then freeze what start-up made.

    The imported libraries and the app live as long as the process; frozen, they are left out of
    every later collection, so a full collection walks only what requests made. (Servers only:
    tests that build many apps must keep theirs collectable.)
    """
    gc.collect()
    gc.freeze()
    return app


def app() -> FastAPI:
    return ready_to_serve(create_app())
