"""(filled in by the web app work)"""

from fastapi import APIRouter

router = APIRouter()
