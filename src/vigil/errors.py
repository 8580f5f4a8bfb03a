"""Errors that vigil reports to the user as one clear line."""


class InputError(ValueError):
    """Bad user input: the message names the file, row or key, and the field, and what was expected."""
