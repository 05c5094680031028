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


VALUE_CHARS = 200  # the most of a refused argument's value a message repeats (room for a long path)


class ArgumentError(InputError):
    """One argument refused: ``argument=value: why`` in Python, ``--option=value: why`` on the command line.

    The library names the Python argument; :func:`render.cli.options.friendly`
    shows :meth:`for_option` instead, so each user reads the name they typed.

    Parameters
    ----------
    argument : str
        The Python argument (``"ratios"``).
    value : str
        The value as shown (already formatted); cut to :data:`VALUE_CHARS` characters.
    why : str
        What is wrong and the fix, as the command line words it.
    option : str or None
        The command line's option (default ``--`` and the argument with dashes).
    python_why : str or None
        The same for a Python caller, where it differs (an option it names, such as ``--overwrite``).
    cli : str or None
        The command line's whole message, where it does not take the form ``--option=value: why``
        (an output file named by its path, a pair of options that go together).
    """

    def __init__(self, argument: str, value: object, why: str, *, option: str | None = None, python_why: str | None = None, cli: str | None = None) -> None:
        text = str(value)  # whatever a caller formatted, never a whole object's repr: cut as render.units.shorten cuts
        self.argument, self.value, self.why, self.cli = argument, text if len(text) <= VALUE_CHARS else text[: VALUE_CHARS - 1] + "…", why, cli
        self.option = option or "--" + argument.replace("_", "-")
        super().__init__(f"{argument}={self.value}: {python_why or why}")

    def for_option(self) -> str:
        """The message as the command line words it."""
        return str(InputError(self.cli or f"{self.option}={self.value}: {self.why}"))


class PassiveGiven(InputError):
    """A passive pickup's file (``kind = "passive"``) named where a design with a preamp is expected.

    ``path`` is the file. The message is complete as it stands; the CLI words the
    fix with what the command at hand offers (its ``--compare``, or the commands
    that have one).
    """

    def __init__(self, path: object) -> None:
        self.path = str(path)
        super().__init__(
            f'{path}: a passive pickup (kind = "passive") has no preamp to render as a design; give a design with a preamp here (a passive pickup goes only where a comparison pickup is asked for)'
        )


class SkippedDesign(UserWarning):
    """A design left out of a default set (every ``models/*.toml``) that this installation cannot
    render; the CLI shows it as one ``warning:`` line. Named designs are refused instead."""
