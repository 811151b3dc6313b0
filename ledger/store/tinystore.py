"""TinyDB's storage extension point on the durable write path: TinyDB itself is only imported to write."""
from __future__ import annotations

from typing import Any

from tinydb.storages import Storage

from . import durable


class DurableStorage(Storage):
    """TinyDB's storage seam (read, write) on top of ``read_document`` / ``write_document``."""

    def __init__(self, path: str):
        self.path = path

    def read(self) -> dict[str, Any] | None:
        return durable.read_document(self.path)

    def write(self, data: dict[str, Any]) -> None:
        durable.write_document(self.path, data)

    def close(self) -> None:
        pass
