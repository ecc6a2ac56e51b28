"""The home page (the Bench) and the friendly page for unknown page URLs.

The Bench's data is built once by :func:`app.bench_view.build` and embedded
as JSON; the page's script redraws from ``POST /api/view/bench`` on change.

Unknown page URLs get an HTML page instead of the API's JSON error; API and
static paths keep the JSON 404. A plain catch-all route would shadow the
routes and mounts added after this router, hence the low-priority fallback.
"""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse
from fastapi.routing import APIRoute
from starlette.exceptions import HTTPException as StarletteHTTPException

from app.bench_view import BenchIn, build, demo_inputs, form_meta
from app.pages.templating import templates

router = APIRouter()

# Paths that belong to the JSON API or to files, never to the HTML error page.
NOT_PAGES = ("/api", "/static", "/openapi.json")


@router.get("/", response_class=HTMLResponse, include_in_schema=False)
def bench_page(request: Request):
    library = request.app.state.library
    inputs = demo_inputs(library)
    data = {"inputs": inputs, "result": build(BenchIn.model_validate(inputs), library), **form_meta(library)}
    return templates.TemplateResponse(request, "bench.html", {"data": data})


def error_page(request: Request, status: int, title: str, message: str) -> HTMLResponse:
    """A page-style error (other pages may use it for their own unknown ids)."""
    return templates.TemplateResponse(request, "error_page.html",
                                      {"status": status, "title": title, "message": message}, status_code=status)


_ALL_METHODS = ["GET", "HEAD", "POST", "PUT", "PATCH", "DELETE"]


async def unknown_page(request: Request):
    """Last resort for a URL nothing else answers: HTML for pages, the JSON 404 for the rest."""
    path = request.url.path
    if request.method not in ("GET", "HEAD") or any(path == p or path.startswith(p + "/") for p in NOT_PAGES):
        raise StarletteHTTPException(status_code=404, detail=f"nothing at {request.method} {path}")
    return error_page(request, 404, "No such page", f"There is no page at {path}. The menu above lists every page.")


def _install_fallback(target: APIRouter) -> None:
    """Register :func:`unknown_page` as a low-priority route.

    FastAPI tries low-priority routes only after every normal route, mount,
    405 and slash redirect of the whole app has failed, so the fallback never
    shadows a page another router adds. (FastAPI keeps them in a private list;
    tests/test_api_errors.py pins this behaviour.)
    """
    route = APIRoute("/{path:path}", unknown_page, methods=_ALL_METHODS, include_in_schema=False,
                     response_class=HTMLResponse)
    target._low_priority_routes.append(route)
    target._mark_routes_changed()


_install_fallback(router)
