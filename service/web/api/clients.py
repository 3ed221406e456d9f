"""Bearer token -> the registered client it belongs to (the security layer keeps tokens hashed)."""

from __future__ import annotations

from sqlalchemy.engine import Engine

from service import errors as e
from service.web.api.access import Principal


def principal_for_token(engine: Engine, token: str) -> Principal:
    from service.services.security_clients import client_for_token

    client = client_for_token(engine, token)
    if client is None:
        raise e.NotAuthenticated(
            "the bearer token is not valid: unknown, revoked, or its client is disabled; "
            "ask the administrator for a new one (`bandgate token create`)"
        )
    return Principal(client_id=str(client.client_id), client_name=client.name, scopes=frozenset(client.scopes),
                     token_id=client.token_id)
