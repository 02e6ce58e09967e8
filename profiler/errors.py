"""The one exception type that carries a user-facing message.

Every problem a user can fix (bad coordinates, a missing file, a site
outside the elevation model) is raised as :class:`ProfilerError` with a
one-line message saying what is wrong and what to do.  The command line
prints that line and exits non-zero; it never shows a traceback.
"""


class ProfilerError(Exception):
    """A problem with the user's input, explained in one line."""

    exit_code = 2

    def __init__(self, message: str):
        from .textsafe import terminal_text  # control characters a user typed never reach the terminal raw

        super().__init__(terminal_text(" ".join(str(message).split())))


def refuse_empty_path(path, option: str, what: str) -> None:
    """Refuse an empty or blank input path with one line naming ``option``.

    ``Path("")`` is the current folder, so without this check ``--dem ''``
    would search the working directory for rasters and ``--sites ''`` would
    report "not found: .".
    """
    if path is not None and not str(path).strip():
        raise ProfilerError(f"{option}: the path is empty; give {what}")
