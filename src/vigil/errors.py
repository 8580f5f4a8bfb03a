"""Errors that vigil reports to the user as one clear line."""


class InputError(ValueError):
    """Bad user input: the message names the file, row or key, and the field, and what was expected."""


class ArgumentError(InputError):
    """A bad value of one named argument of the Python API; the command line names its option instead."""

    def __init__(self, argument: str, detail: str):
        super().__init__(f"{argument}: {detail}")
        self.argument = argument
        self.detail = detail
