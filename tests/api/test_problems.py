"""Problem details (RFC 9457) for every kind of error, and the public health route."""

from __future__ import annotations

PROBLEM = "application/problem+json"


def test_health_is_public(client) -> None:
    response = client.get("/api/v1/health")
    assert response.status_code == 200
    assert response.json()["status"] == "ok" and response.json()["database"] == "ok"


def test_openapi_and_docs_are_public(client) -> None:
    schema = client.get("/openapi.json").json()
    assert schema["info"]["title"] == "lostwork"
    assert "PlantFile" in schema["components"]["schemas"]
    assert client.get("/docs").status_code == 200


def test_validation_error_names_the_field(client, make_key) -> None:
    response = client.post(
        "/api/v1/readings/columnar",
        json={"plant": "x", "times": "soon"},
        headers=make_key("ingest"),
    )
    body = response.json()
    assert response.status_code == 422
    assert response.headers["content-type"] == PROBLEM
    assert set(body) == {"type", "title", "status", "detail", "instance", "errors"}
    assert (body["type"], body["title"], body["status"]) == (
        "urn:lostwork:problem:invalid-input",
        "Invalid input",
        422,
    )
    assert body["instance"] == "/api/v1/readings/columnar"
    assert body["detail"] == "The request is not valid: times, series"
    assert [e["field"] for e in body["errors"]] == ["times", "series"]
    assert body["errors"][0]["message"] == "times: Input should be a valid list"


def test_validation_error_in_a_list_gives_the_index(client, make_key) -> None:
    response = client.post(
        "/api/v1/readings",
        json={"plant": "x", "readings": [{"tag": "a"}, "not an object"]},
        headers=make_key("ingest"),
    )
    error = response.json()["errors"][0]
    assert (error["field"], error["index"]) == ("readings[1]", 1)


def test_malformed_json_is_a_problem(client, make_key) -> None:
    response = client.post(
        "/api/v1/readings",
        content=b'{"plant": ',
        headers={**make_key("ingest"), "Content-Type": "application/json"},
    )
    assert response.status_code == 422
    assert response.headers["content-type"] == PROBLEM
    assert response.json()["errors"] == [
        {"field": "body", "message": "the body is not valid JSON: Expecting value at character 10"}
    ]


def test_unknown_path_and_method_are_problems(client) -> None:
    missing = client.get("/api/v1/nothing-here")
    assert (missing.status_code, missing.headers["content-type"]) == (404, PROBLEM)
    assert missing.json() == {
        "type": "about:blank",
        "title": "Not Found",
        "status": 404,
        "detail": "Not Found",
        "instance": "/api/v1/nothing-here",
        "errors": [],
    }
    wrong = client.delete("/api/v1/health")
    assert (wrong.status_code, wrong.json()["title"]) == (405, "Method Not Allowed")


def test_json_body_over_the_request_limit_is_413(client, make_key, settings) -> None:
    limit = settings.request_max_bytes
    response = client.post(
        "/api/v1/readings",
        content=b" " * (limit + 1),
        headers={**make_key("ingest"), "Content-Type": "application/json"},
    )
    body = response.json()
    assert response.status_code == 413
    assert body["limit_bytes"] == limit
    assert body["detail"].endswith(
        f"the limit for /api/v1/readings is {limit} bytes ({limit / 2**20:g} MiB, "
        "setting LOSTWORK_REQUEST_MAX_BYTES)"
    )
