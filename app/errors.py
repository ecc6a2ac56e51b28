"""The one domain error the core raises.

Every check in the core names the field it is about, so the edges can turn
it into a 422 body or a one-line CLI message without guessing.
"""


class InputError(ValueError):
    """Bad input, tied to a field path such as ``sensor.beta_k``."""

    def __init__(self, field: str, message: str):
        self.field = field
        self.message = message
        super().__init__(f"{field}: {message}")

    def within(self, prefix: str) -> "InputError":
        """The same error with its field moved under ``prefix``."""
        field = f"{prefix}.{self.field}" if self.field else prefix
        return InputError(field, self.message)
