"""The one exception type a user is meant to see.

Anything raised as :class:`InputError` reaches the user as one line on
stderr and exit code 1; the CLI never shows them a traceback for it.
"""


class InputError(ValueError):
    """Bad input from a file or an option: the message is one complete line.

    Messages follow one form: what was wrong as ``name=value``, the
    constraint it broke, and where possible how to fix it.
    """
