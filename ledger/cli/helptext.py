"""The one line a sub-command shows in 'propledger --help' and, as a sentence, atop its own '--help'."""
from __future__ import annotations


def about(line: str) -> dict[str, str]:
    """``add_parser`` keywords: the summary for the command list, the same words as the description."""
    return {"help": line, "description": line[:1].upper() + line[1:] + "."}
