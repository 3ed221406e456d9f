"""The OpenAPI document: served at /api/v1/openapi.json, with examples for every endpoint, the bearer
scheme, and problem+json for the errors."""

from __future__ import annotations

from typing import Any

from fastapi.testclient import TestClient

from service.config import Settings
from service.web.app import create_app


def _resolve(doc: dict[str, Any], node: Any) -> Any:
    while isinstance(node, dict) and "$ref" in node:
        node = doc["components"]["schemas"][node["$ref"].rsplit("/", 1)[-1]]
    return node


def _has_example(doc: dict[str, Any], schema: Any, depth: int = 0) -> bool:
    schema = _resolve(doc, schema)
    if not isinstance(schema, dict) or depth > 3:
        return False
    if "examples" in schema or "example" in schema:
        return True
    for key in ("items", "additionalProperties"):
        if key in schema and _has_example(doc, schema[key], depth + 1):
            return True
    if "properties" in schema and "items" in schema["properties"]:
        return _has_example(doc, schema["properties"]["items"], depth + 1)
    return any(_has_example(doc, s, depth + 1) for s in schema.get("anyOf", []) + schema.get("allOf", []))


def test_every_endpoint_has_examples_security_and_problem_answers(tmp_path) -> None:  # type: ignore[no-untyped-def]
    app = create_app(Settings(database_url=f"sqlite:///{tmp_path / 'x.db'}"), check_migrations=False)
    doc = TestClient(app).get("/api/v1/openapi.json").json()
    assert doc["components"]["securitySchemes"]["bearer"]["scheme"] == "bearer"
    missing = []
    for path, item in doc["paths"].items():
        if not path.startswith("/api/v1/"):
            continue
        for method, op in item.items():
            ok = [r for code, r in op["responses"].items() if code.startswith("2")]
            content = ok[0].get("content", {}).get("application/json", {})
            examples = _has_example(doc, content.get("schema")) or "example" in content
            body = op.get("requestBody", {}).get("content", {})
            examples = examples or any("example" in c or _has_example(doc, c.get("schema")) for c in body.values())
            if not examples:
                missing.append(f"{method.upper()} {path}")
            assert op.get("security") == [{"bearer": []}], f"{method} {path} has no bearer security"
            assert "scope" in op["description"], f"{method} {path} does not say which scope it needs"
            for code in ("401", "403"):
                assert "application/problem+json" in op["responses"][code]["content"]
    assert not missing, missing
