"""Import a CCSDS message or a firings CSV from the console: pick the file, see the dry run (every entry
and warning it would record), then confirm. The same service as ``propledger import`` (services.imports),
so the console records exactly what the command would."""
from __future__ import annotations

import os
from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import VerticalScroll
from textual.widgets import Static

from ...services import imports
from ..fmt import COLOUR
from .base import LATER, Field, FormDialog, text_field

FORMATS = [("as the file says (.csv = firings)", "auto"), ("ocm", "ocm"), ("opm", "opm"), ("firings (CSV)", "firings")]
GROUPS = [("per pass (quiet gap)", "pass"), ("per orbit", "orbit"), ("one entry per row", "none")]
OPM_AS = [("plans", "plans"), ("executed burns", "executed")]


def _path(raw: Any):
    text = (raw or "").strip()
    if not text:
        return None, "required: the message or CSV file to import"
    path = os.path.expanduser(text)
    if not os.path.isfile(path):
        return None, f"no such file: {text}"
    return path, None


def preview_text(data: dict[str, Any]) -> Text:
    """The dry run (or the import's result) as the command line prints it, warnings in the warning colour."""
    out = Text()
    for line in imports.summary_lines(data):
        out.append(line + "\n", style="bold" if line.startswith(("would", "recorded")) else "")
    for w in data["warnings"]:
        out.append(f"⚠ {w}\n", style=COLOUR["attention"])
    return out


class ImportForm(FormDialog):
    TITLE = "⇣ Import a CCSDS message or telemetry firings"
    HINT = ("OPM/OCM in KVN or XML, or a firings CSV. ctrl+s shows the dry run (nothing written); ctrl+s again "
            "records it, once: a file already imported adds nothing.")
    OK_LABEL = "Dry run  ctrl+s"
    LONG = True

    def __init__(self) -> None:
        self.previewed: tuple | None = None
        super().__init__()

    def make_fields(self) -> list[Field]:
        engines = [(e, e) for e in self.app.snap.craft.engine_ids] if self.app.snap else []
        return [
            Field("file", "file", _path, "e.g. ~/fd/plan-0042.ocm or firings-2026-12-02.csv", required=True),
            Field("format", "format", options=FORMATS, value="auto", required=True),
            Field("group", "firings summed", options=GROUPS, value="pass", required=True),
            Field("engine", "OPM engine", options=engines),
            Field("opm_as", "OPM manoeuvres", options=OPM_AS, value="plans", required=True),
            text_field("by", "by", "blank = the operating-system user"),
        ]

    def compose_extra(self) -> ComposeResult:
        with VerticalScroll(id="import-scroll"):
            yield Static("", id="import-result")

    def field_changed(self, name: str) -> None:
        if self.previewed is not None:
            self.previewed = None
            self.query_one("#import-result", Static).update(Text("changed: ctrl+s shows the dry run again",
                                                                 style="italic"))
            self.query_one("#ok").label = self.OK_LABEL

    @staticmethod
    def _key(values: dict[str, Any]) -> tuple:
        return tuple(values.get(k) for k in ("file", "format", "group", "engine", "opm_as", "by"))

    def _reader(self, values: dict[str, Any]):
        fmt = None if values.get("format") in (None, "auto") else values["format"]
        return imports.reader_for(values["file"], fmt, group=values.get("group") or "pass",
                                  engine=values.get("engine"), executed=values.get("opm_as") == "executed")

    def commit(self, values: dict[str, Any]) -> Any:
        live, key = self.app.live, self._key(values)
        reader, by = self._reader(values), values.get("by") or None
        if self.previewed is not None and self.previewed[0] == key:
            if not (self.previewed[1]["recorded"] or self.previewed[1]["corrected"]):
                self.dismiss(None)  # nothing to record: the dry run said so
                return LATER

            def record(progress):
                return imports.summary(imports.run(live, reader, dry_run=False, by=by), False)
            self.start_work(record, self._recorded, f"importing {os.path.basename(values['file'])}", writes=True)
            return LATER

        def preview(progress):
            return imports.summary(imports.run(live, reader, dry_run=True, by=by), True)
        self.start_work(preview, lambda d: self._previewed(key, d), f"reading {os.path.basename(values['file'])}")
        return LATER

    def _previewed(self, key: tuple, data: dict[str, Any]) -> None:
        self.previewed = (key, data)
        self.query_one("#import-result", Static).update(preview_text(data))
        new = data["recorded"] + data["corrected"]
        self.query_one("#ok").label = f"Record {new}  ctrl+s" if new else "Close  ctrl+s"

    def _recorded(self, data: dict[str, Any]) -> None:
        new = [r for r in data["entries"] if r["action"] != "same"]
        if new:
            self.app.recorded(new[-1]["id"], "import", list(data["warnings"]))
        self.app.notify(imports.summary_lines(data)[-1], timeout=6)
        self.dismiss(data)
