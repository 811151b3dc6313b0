"""One exception type for every problem a user can fix: the shells print its message as one line."""


class LedgerError(Exception):
    """A clear, user-facing problem (bad input, damaged file, lock timeout). Nothing was written."""


class InputError(LedgerError):
    """Bad input from a user: a craft file, an option, a quantity."""


class StoreError(LedgerError):
    """The ledger file cannot be read or written as asked."""
