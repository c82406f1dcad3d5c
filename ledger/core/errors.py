"""Errors the services raise for a refused action; views show the message to the person."""


class ActionRefused(Exception):
    """The action is not possible in the current state; the message says why and what to do.

    ``field`` names the form field the message belongs to, when there is one.
    """

    def __init__(self, message: str, *, field: str | None = None):
        super().__init__(message)
        self.message = message
        self.field = field
