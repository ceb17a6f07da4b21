"""The one exception the statistics layer raises for data it cannot analyse."""

from __future__ import annotations


class DataError(ValueError):
    """The data (or a parameter) break a rule of the method.

    ``rule`` is a short stable identifier (for example ``"min-groups"``);
    ``pointer`` is a JSON pointer relative to the request the numbers came
    from (for example ``"/groups/2/values"``), so that a caller can name the
    offending field without the statistics knowing about HTTP.
    """

    def __init__(self, rule: str, message: str, pointer: str = "") -> None:
        super().__init__(message)
        self.rule = rule
        self.message = message
        self.pointer = pointer
