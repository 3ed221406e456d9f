"""ASGI entry point for multi-worker servers: `uvicorn service.web.asgi:app --factory`."""

from fastapi import FastAPI

from service.web.app import create_app


def app() -> FastAPI:
    return create_app()
