"""Optional API keys. With keys configured, every endpoint but /healthz needs
`Authorization: Bearer <key>`; without, the service is open (for a private
network behind a proxy that does its own access control)."""

from __future__ import annotations

import hashlib
import hmac

from flask import Flask, request

from cleaner.web.problems import problem_response

# A load balancer's health check carries no key.
OPEN_ENDPOINTS = frozenset({"meta.healthz"})


def key_matches(presented: str, digests: frozenset[bytes]) -> bool:
    """Whether the key's SHA-256 is one of the digests. Every digest is
    compared, each in constant time, so the answer takes as long whichever
    key, and whichever part of a key, was wrong."""
    digest = hashlib.sha256(presented.encode("latin-1")).digest()
    matched = False
    for known in digests:
        matched |= hmac.compare_digest(digest, known)
    return matched


def authorised(authorization: str, digests: frozenset[bytes]) -> bool:
    """Whether an Authorization header's value is a Bearer key the service knows."""
    scheme, _, key = authorization.partition(" ")
    return scheme.lower() == "bearer" and key_matches(key.strip(), digests)


def register(app: Flask, digests: frozenset[bytes]) -> None:
    if not digests:
        return

    @app.before_request
    def require_key():
        if request.endpoint in OPEN_ENDPOINTS:
            return None
        if authorised(request.headers.get("Authorization", ""), digests):
            return None
        # One answer for a missing header, another scheme and a wrong key alike.
        response = problem_response(401, "unauthorized", "Unauthorized",
                                    "This endpoint needs the header Authorization: Bearer "
                                    "followed by an API key the service knows.")
        response.headers["WWW-Authenticate"] = 'Bearer realm="demographic-cleaner"'
        return response
