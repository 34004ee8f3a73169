"""The one exception type meant for users.

Every layer raises :class:`RingprintError` for bad input. Its message is one line
that names the offending file, key or value and says how to fix it; the CLI prints
that line and exits non-zero without a traceback (``--debug`` shows one).
"""


class RingprintError(ValueError):
    """A user-facing error: one line naming the file/key/value and the fix."""

    def __init__(self, message: str):
        message = " ".join(str(message).split())  # always a single line
        super().__init__(message)
