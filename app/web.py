"""The FastAPI application: routers, static files, templates, limits.

``create_app(settings)`` builds a fresh app (tests build one per temporary
data folder); ``app.state`` carries the settings, parts library and store.
"""

from __future__ import annotations

from pathlib import Path

import plotly
from fastapi import FastAPI
from fastapi.staticfiles import StaticFiles

from app import __version__
from app.api import budget, compare, core, designs, errors, table, trip
from app.api import shelf as shelf_api
from app.pages import accuracy, alarms, apidocs, firmware, routes, saved
from app.pages import shelf as shelf_pages
from app.parts import Library
from app.ratelimit import SlidingWindow
from app.security import SecurityHeaders
from app.settings import Settings

ROOT = Path(__file__).resolve().parent.parent
STATIC_DIR = ROOT / "static"
PLOTLY_DIR = Path(plotly.__file__).resolve().parent / "package_data"

API_ROUTERS = (core.router, designs.router, shelf_api.router, compare.router, budget.router, table.router, trip.router)
PAGE_ROUTERS = (routes.router, saved.router, shelf_pages.router, accuracy.router, firmware.router, alarms.router,
                apidocs.router)


class BodyLimit:
    """Refuse request bodies over the limit with 413 before reading them whole."""

    def __init__(self, app, max_bytes: int):
        self.app = app
        self.max_bytes = max_bytes

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            return await self.app(scope, receive, send)
        declared = dict(scope.get("headers") or []).get(b"content-length")
        if declared is not None and (not declared.isdigit() or int(declared) > self.max_bytes):
            return await self._refuse(send)
        seen = 0

        async def limited():
            nonlocal seen
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > self.max_bytes:
                    raise _TooLarge()
            return message

        try:
            await self.app(scope, limited, send)
        except _TooLarge:
            await self._refuse(send)

    async def _refuse(self, send):
        body = errors.error_body(413, [{"field": "", "message": f"request body over {self.max_bytes} bytes"}])
        import json

        data = json.dumps(body).encode()
        await send({"type": "http.response.start", "status": 413,
                    "headers": [(b"content-type", b"application/json"), (b"content-length", str(len(data)).encode())]})
        await send({"type": "http.response.body", "body": data})


class _TooLarge(Exception):
    pass


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or Settings.from_env()
    app = FastAPI(
        title="ohmpick",
        version=__version__,
        description="Design sensor voltage dividers: choose the fixed resistor, check accuracy, make firmware tables.",
        docs_url=None,  # the stock docs page loads its assets from the internet; /docs is our own
        redoc_url=None,
    )
    app.state.settings = settings
    app.state.library = Library.load(settings.parts_dir)
    app.state.save_limiter = SlidingWindow(settings.saves_per_minute, 60.0)
    errors.install(app)
    for router in API_ROUTERS:
        app.include_router(router)
    for router in PAGE_ROUTERS:
        app.include_router(router)
    app.mount("/static/vendor", StaticFiles(directory=PLOTLY_DIR), name="vendor")
    app.mount("/static", StaticFiles(directory=STATIC_DIR), name="static")
    for hook in (designs.on_startup,):
        hook(app)
    app.add_middleware(BodyLimit, max_bytes=settings.max_body_bytes)
    app.add_middleware(SecurityHeaders)
    return app
