"""Renamed keyword arguments of the public functions, kept for one release with a ``DeprecationWarning``.

One quantity has one parameter name across the Python API (``clearance_ratio``, ``k_factor``,
``mast_a_m``, ...).  Where a public function used another name, :func:`renamed_keyword` keeps the old
keyword working for one release: the call warns, naming the new keyword, and goes on with the value
under the new name (as pvlib's ``renamed_kwarg_warning`` does).
"""

from __future__ import annotations

import functools
import warnings


def renamed_keyword(old: str, new: str, *, since: str, removal: str = "the next release"):
    """Decorator: accept keyword ``old`` as ``new`` with a ``DeprecationWarning``.

    Parameters
    ----------
    old : str
        The keyword's former name.
    new : str
        The keyword's name now (a parameter of the decorated function).
    since : str
        The version that renamed it.
    removal : str
        When the old name goes away.

    Returns
    -------
    callable
        The decorator.  Giving both names is a ``TypeError``.
    """

    def decorator(function):
        @functools.wraps(function)
        def wrapper(*args, **kwargs):
            if old in kwargs:
                if new in kwargs:
                    raise TypeError(f"{function.__name__}() got both {old!r} and {new!r}; give only {new!r}")
                warnings.warn(f"{function.__name__}({old}=...) is deprecated since {since} and will be removed "
                              f"in {removal}; use {new}=...", DeprecationWarning, stacklevel=2)
                kwargs[new] = kwargs.pop(old)
            return function(*args, **kwargs)

        return wrapper

    return decorator
