"""Errors that vigil reports to the user as one clear line."""


class InputError(ValueError):
    """Bad user input: the message names the file, row or key, and the field, and what was expected."""


class ArgumentError(InputError):
    """A bad value of one named argument of the Python API, or a problem that argument resolves.

    The message names the argument as the caller knows it: the keyword in Python (``str``), the
    option on the command line (`named`, which vigil.cli_support.user_errors uses). By default
    the message is "ARGUMENT: DETAIL"; a `template` puts the name elsewhere, at ``{argument}``.

    Examples
    --------
    >>> str(ArgumentError("scheduler", "expected 'local' or tcp://HOST:PORT, got 'x'"))
    "scheduler: expected 'local' or tcp://HOST:PORT, got 'x'"
    >>> ArgumentError("format", "", "t.xml: not a table; give its format ({argument})").named("--format")
    't.xml: not a table; give its format (--format)'
    """

    def __init__(self, argument: str, detail: str, template: str = "{argument}: {detail}"):
        self.argument = argument
        self.detail = detail
        self.template = template
        super().__init__(self.named(argument))

    def named(self, name: str) -> str:
        """The message with the argument called `name` (e.g. the command line's option)."""
        return self.template.replace("{detail}", self.detail).replace("{argument}", name)
