"""One-line error messages of the run loader.

Every bad-input message of :mod:`kit.io` is one line ``where: what was wrong;
expected what`` (DEVELOPERS.md); these two helpers build them.
"""

from kit.errors import InputError

__all__ = ["input_error", "join_names"]


def input_error(where, message):
    """InputError with one line ``where: message`` (newlines flattened).

    Parameters
    ----------
    where : str or os.PathLike or None
        The file, variable or argument the message is about; empty or None
        gives the message alone.
    message : str
        What was wrong and what was expected.

    Returns
    -------
    kit.errors.InputError
        To be raised by the caller.

    Examples
    --------
    >>> str(input_error("run.nc", "no t variable;  expected one"))
    'run.nc: no t variable; expected one'
    """
    text = f"{where}: {message}" if where else str(message)
    return InputError(" ".join(str(text).split()))


def join_names(names, limit=12):
    """Comma-separated list of names for a message, cut after ``limit``.

    Parameters
    ----------
    names : iterable
        Names or values (printed with ``str``).
    limit : int, optional
        Most names shown; the rest are counted.

    Returns
    -------
    str
        ``"a, b, c"``, ``"a, b and 3 more"``, or ``"nothing"`` when empty.

    Examples
    --------
    >>> join_names(["t", "u", "v"], limit=2)
    't, u and 1 more'
    """
    names = [str(n) for n in names]
    if len(names) > limit:
        return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
    return ", ".join(names) if names else "nothing"
