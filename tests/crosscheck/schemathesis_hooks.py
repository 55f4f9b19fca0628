"""Schemathesis hooks for Residue: a check that every 4xx is problem details,
and a serializer for the NDJSON body of the batch operation.

Loaded by tests/crosscheck/schemathesis.sh through SCHEMATHESIS_HOOKS.
"""

import json

import schemathesis


@schemathesis.check
def problem_details_for_4xx(ctx, response, case):
    """Every 4xx answer is RFC 9457 problem details with type, title, status and detail."""
    if not 400 <= response.status_code < 500:
        return None
    media = response.headers.get("content-type", [""])
    media = (media[0] if isinstance(media, list) else media).split(";")[0].strip().lower()
    if media != "application/problem+json":
        raise AssertionError(f"a {response.status_code} answered as {media!r}, not application/problem+json")
    try:
        body = json.loads(response.content)
    except ValueError as e:
        raise AssertionError(f"a {response.status_code} whose problem details are not JSON: {e}") from e
    for key in ("type", "title", "status", "detail"):
        if key not in body:
            raise AssertionError(f"problem details without {key!r}: {body}")
    if body["status"] != response.status_code:
        raise AssertionError(f"problem status {body['status']} != HTTP status {response.status_code}")
    for error in body.get("errors", []):
        if not isinstance(error.get("pointer"), str) or not isinstance(error.get("message"), str):
            raise AssertionError(f"an errors[] item without pointer and message: {error}")
    return None


@schemathesis.serializer("application/x-ndjson")
def ndjson_serializer(ctx, value):
    """The batch body is described as text (NDJSON lines); send it as UTF-8 bytes."""
    if isinstance(value, bytes):
        return value
    if isinstance(value, str):
        return value.encode("utf-8")
    return (json.dumps(value) + "\n").encode("utf-8")
