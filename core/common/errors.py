"""The one error type for bad input, carrying the field it concerns."""

__all__ = ["InputError"]


class InputError(ValueError):
    """Bad input from a user: names the field and the reason.

    ``str(err)`` is ``"FIELD: REASON"``, the one line the command line prints.
    """

    def __init__(self, field: str, reason: str):
        super().__init__(f"{field}: {reason}")
        self.field = field
        self.reason = reason
