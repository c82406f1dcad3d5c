"""Domain errors of the ledger."""


class LedgerError(Exception):
    """Base class; messages are meant for people."""


class LedgerImmutableError(LedgerError):
    """Something tried to change or remove a sealed row."""


class LedgerWriteError(LedgerError):
    """The database refused an append (a trigger, a lost connection); nothing was written."""
