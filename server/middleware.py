"""The outermost layer of the app (pure ASGI): security headers on every response, whoever produced it, and the
body-size refusal as problem+json."""

from __future__ import annotations

import json
from typing import Any

from starlette.datastructures import MutableHeaders
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from server.errors import problem

# Scripts only from our own origin (no inline scripts or handlers: web/static/js/behaviours.js wires them);
# inline style attributes stay allowed (progress bars, column widths). No framing by any site.
CONTENT_SECURITY_POLICY = "; ".join((
    "default-src 'self'",
    "script-src 'self'",
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data:",
    "font-src 'self'",
    "connect-src 'self'",
    "object-src 'none'",
    "base-uri 'self'",
    "form-action 'self'",
    "frame-ancestors 'none'",
))


class SecurityHeaders:
    """Add CSP, nosniff, referrer and framing policies (and HSTS when served over HTTPS) to every response.

    It wraps FastAPI's whole middleware stack (``server.main.App``), so the 413 that the request-body limit sends
    before any handler runs gets the headers too, and becomes an RFC 9457 problem document.
    """

    def __init__(self, app: ASGIApp, *, https: bool = False) -> None:
        self.app = app
        self.headers = {
            "Content-Security-Policy": CONTENT_SECURITY_POLICY,
            "X-Content-Type-Options": "nosniff",
            "Referrer-Policy": "same-origin",
            "X-Frame-Options": "DENY",
            "Cross-Origin-Opener-Policy": "same-origin",
            "Permissions-Policy": "camera=(), microphone=(), geolocation=(), payment=()",
        }
        if https:
            self.headers["Strict-Transport-Security"] = "max-age=31536000"

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return

        rewrite: dict[str, Any] = {}

        async def send_with_headers(message: Message) -> None:
            if message["type"] == "http.response.start":
                headers = MutableHeaders(scope=message)
                if message["status"] == 413 and headers.get("content-type", "").startswith("text/plain"):
                    rewrite["body"] = _too_large(scope)
                    headers["content-type"] = "application/problem+json"
                    headers["content-length"] = str(len(rewrite["body"]))
                for name, value in self.headers.items():
                    if name not in headers:
                        headers.append(name, value)
            elif message["type"] == "http.response.body" and rewrite:
                if message.get("more_body"):
                    return
                message = {"type": "http.response.body", "body": rewrite["body"]}
            await send(message)

        await self.app(scope, receive, send_with_headers)


def _too_large(scope: Scope) -> bytes:
    limit = scope.get("starlette.max_body_size")
    detail = (f"The request body is larger than this route accepts ({limit} bytes); nothing was read or saved"
              if limit else "The request body is too large")
    return json.dumps(problem(413, "Content too large", detail)).encode()
