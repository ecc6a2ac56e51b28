"""The one Jinja environment every page renders with."""

from pathlib import Path

from fastapi.templating import Jinja2Templates

from app.pages.nav import NAV
from app.units import format_resistance

TEMPLATES_DIR = Path(__file__).resolve().parent.parent.parent / "templates"

templates = Jinja2Templates(directory=str(TEMPLATES_DIR))
templates.env.globals["nav"] = NAV
templates.env.filters["ohm"] = format_resistance
