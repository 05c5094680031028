"""The one exception type a user is meant to see.

Anything raised as :class:`InputError` reaches the user as one line on
stderr and exit code 1; the CLI never shows them a traceback for it.
"""


class InputError(ValueError):
    """Bad input from a file or an option: the message is one complete line.

    Messages follow one form: what was wrong as ``name=value``, the
    constraint it broke, and where possible how to fix it. Line breaks that
    slip in (a file name with a newline in it, say) are shown escaped, so
    the message stays one line whatever it quotes.
    """

    def __str__(self) -> str:
        text = super().__str__()
        return text.replace("\r", "\\r").replace("\n", "\\n")


class SkippedDesign(UserWarning):
    """A design left out of a default set (every ``models/*.toml``) that this installation cannot
    render; the CLI shows it as one ``warning:`` line. Named designs are refused instead."""
