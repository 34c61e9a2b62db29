"""Serves plotly.js from the installed plotly package, so no page needs the network.

Static files of our own are mounted in app/web/app.py; nothing here is fetched from elsewhere.
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from pathlib import Path

from fastapi import APIRouter
from fastapi.responses import FileResponse

router = APIRouter()


@cache
def plotly_js() -> Path:
    """The minified plotly.js bundled inside the plotly Python package."""
    path = Path(str(resources.files("plotly") / "package_data" / "plotly.min.js"))
    if not path.is_file():
        raise FileNotFoundError(f"plotly.min.js is missing from the plotly package ({path})")
    return path


@router.get("/assets/plotly.min.js", include_in_schema=False)
def plotly_asset() -> FileResponse:
    return FileResponse(plotly_js(), media_type="text/javascript",
                        headers={"Cache-Control": "max-age=86400"})
