"""Assets served by the application itself (never from another host)."""
from __future__ import annotations

from functools import lru_cache
from pathlib import Path

from flask import send_file


@lru_cache(maxsize=1)
def plotly_js_path() -> Path:
    """plotly.min.js of the installed plotly package."""
    import plotly
    path = Path(plotly.__file__).parent / "package_data" / "plotly.min.js"
    if not path.is_file():          # pragma: no cover - a broken plotly installation
        raise FileNotFoundError(f"plotly.min.js not found in {path.parent}")
    return path


def plotly_response():
    return send_file(plotly_js_path(), mimetype="text/javascript", max_age=7 * 24 * 3600,
                     conditional=True)
