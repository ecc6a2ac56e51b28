"""(filled in by its issue)"""

from fastapi import APIRouter

router = APIRouter(prefix="/api")


def on_startup(app) -> None:
    """Open the store (filled in by the saved-designs work)."""
