"""The one shape of a form error: which field, and a message naming the rule it breaks."""


class FieldInputError(ValueError):
    """Bad input for one form field; routes answer 422 with `message` at `field`."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field
        self.message = message


def nul_problem(text: str) -> str | None:
    """The NUL rule's message when `text` holds a NUL character (forms and study files)."""
    return "must not contain the NUL control character (\\x00)." if "\x00" in text else None


def length_problem(text: str, limit: int) -> str | None:
    """The message of the rule typed text breaks, else None: every text field's one check.

    Text must fit its column's `limit` and hold no NUL character (PostgreSQL refuses NUL in
    text, and no one types it on purpose).
    """
    if problem := nul_problem(text):
        return problem
    if len(text) <= limit:
        return None
    return f"at most {limit} characters (got {len(text)})."
