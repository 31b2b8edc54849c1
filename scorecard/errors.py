"""The one exception type for bad input.

Every problem a user can fix (a wrong key, a missing column, an unreadable file) is raised as
:class:`InputError` with a message that names the file, key, column or row at fault. The command
line turns it into a single ``error:`` line and exit status 2; library callers catch it like any
other exception.
"""


class InputError(ValueError):
    """Bad input that the user can correct.

    Parameters
    ----------
    message : str
        One line naming the file, key, column or row at fault.

    Examples
    --------
    >>> raise InputError("config.yaml: binning.max_bins: must be at least 2 (line 12)")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: config.yaml: binning.max_bins: must be at least 2 (line 12)
    """


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (its type name when it has none), for an error line.

    Examples
    --------
    >>> first_line(OSError("disk full\\nmore detail"))
    'disk full'
    """
    return (str(exc).strip().splitlines() or [exc.__class__.__name__])[0]


class ResultWarning(UserWarning):
    """A warning that the result differs from what the config asked for.

    Examples: a sample without both goods and bads has no AUC, Gini or KS; extreme values were
    set apart. The command line shows these even under ``--quiet``; other warnings it silences.
    """
