"""``python -m ledger`` runs the command line (the same entry point as the ``propledger`` script)."""
from .cli import run

run()
