"""Reports: turn a service result (a plain dict) into text, Markdown or HTML. They compute nothing."""
from __future__ import annotations

import importlib
from typing import Any, Mapping

FORMATS = {"text": "text", "md": "markdown", "html": "html"}


def render(report: Mapping[str, Any], fmt: str) -> str:
    """The handover in one of FORMATS; each renderer is imported only when asked for."""
    return importlib.import_module(f"{__name__}.{FORMATS[fmt]}").render(report)
