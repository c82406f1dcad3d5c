"""The one error type of the statistics engine."""


class StatsInputError(ValueError):
    """An input no statistical method can use (alpha outside (0, 1), N below 2, NaN ...).

    ``field`` names the offending argument so that a form can attach the message to the
    right input; the message itself says what a valid value looks like.
    """

    def __init__(self, message: str, *, field: str | None = None):
        super().__init__(message)
        self.field = field
