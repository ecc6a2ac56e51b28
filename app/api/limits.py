"""Per-client save limits shared by every route that writes to the store."""

from __future__ import annotations

from fastapi import HTTPException, Request


def check_save_rate(request: Request) -> None:
    """429 when one client address saves more than the setting allows per minute."""
    client = request.client.host if request.client else "unknown"
    allowed, wait = request.app.state.save_limiter.allow(client)
    if not allowed:
        raise HTTPException(429, f"too many saves from {client}: try again in {wait} s",
                            headers={"Retry-After": str(wait)})
