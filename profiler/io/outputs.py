"""Atomic file output: write to a temporary file, then rename into place.

A failed run never leaves a half-written report, figure or export behind.
:func:`write_outputs` is the one place that writes all outputs of a command
(files and standard output): everything is rendered to temporary files
first and renamed into place only when all succeeded.
"""

from __future__ import annotations

import contextlib
import os
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterator, Sequence

from ..errors import ProfilerError


def _folder(target: Path) -> Path:
    return target.parent if str(target.parent) else Path(".")


def _temp_beside(target: Path, option: str | None = None) -> Path:
    """Create an empty temporary file beside ``target`` (same suffix, normal permissions).

    Raises
    ------
    ProfilerError
        The folder is missing or not writable (naming ``option`` when given).
    """
    directory = _folder(target)
    what = f"{target} ({option})" if option else f"{target}"
    if not directory.is_dir():
        raise ProfilerError(f"cannot write {what}: folder {directory} does not exist; create it or choose another path")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=target.suffix or ".tmp", dir=directory)
    except OSError as exc:
        raise ProfilerError(f"cannot write {what}: {exc.strerror or exc} in folder {directory}; "
                            "choose a folder you can write to") from None
    os.close(fd)
    tmp_path = Path(tmp)
    # mkstemp makes the file owner-only; give it the permissions a normal new file would get.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp_path, 0o666 & ~umask)
    return tmp_path


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    The temporary file keeps the target's suffix so that writers choosing a
    format by extension (matplotlib) see the right one.  On any exception the
    temporary file is removed and ``path`` is left untouched.  An empty path
    or one that is a folder is refused (:func:`check_output_path`).
    """
    check_output_path(path, stdout=False)
    target = Path(path)
    tmp_path = _temp_beside(target)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        raise


def write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically; ``-`` means standard output."""
    if str(path) == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    with atomic_path(path) as tmp:
        try:
            tmp.write_text(text, encoding="utf-8", newline="")
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror}") from exc


def write_bytes(path: str | os.PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically."""
    with atomic_path(path) as tmp:
        try:
            tmp.write_bytes(data)
        except OSError as exc:
            raise ProfilerError(f"cannot write {path}: {exc.strerror}") from exc


def check_output_path(path, suffixes: tuple[str, ...] | None = None, option: str = "output",
                      stdout: bool = True) -> None:
    """Refuse early an output path whose folder is missing or whose extension is wrong.

    Called before any computation so that a run never stops half-way through
    writing its outputs.  ``-`` (standard output) is always accepted; an
    empty or all-blank path is refused (it names no file); ``stdout`` says
    whether the message offers ``-``.
    """
    if path is None or str(path) == "-":
        return
    if not str(path).strip():
        dash = " or '-' for standard output" if stdout else ""
        raise ProfilerError(f"{option}: the output path is empty; give a file name{dash}")
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise ProfilerError(f"cannot write {target} ({option}): folder {directory} does not exist; create it first")
    if target.is_dir():
        raise ProfilerError(f"cannot write {target} ({option}): it is a folder; give a file name")
    if suffixes and target.suffix.lower() not in suffixes:
        raise ProfilerError(f"{option} {target}: unknown file type {target.suffix or '(none)'}; "
                            f"use {', '.join(suffixes)}")


# ---------------------------------------------------------------------------- all outputs of one run
@dataclass(frozen=True)
class Output:
    """One output of a command: where it goes and how it is rendered.

    Attributes
    ----------
    option : str
        The option that asked for it (``"--json"``), named in messages.
    path : str, os.PathLike or None
        Target file, ``"-"`` for standard output, None when not asked for.
    render : callable
        ``render(report, path)``: write the output to ``path`` (a temporary
        file with the target's suffix) or return its ``str`` (UTF-8) or
        ``bytes`` content, which is then written to ``path``.
    text : str
        Format whose rule :func:`profiler.textsafe.safe_strings` applies to
        every string of the report before ``render`` sees it: ``"json"``,
        ``"csv"``, ``"xml"``, ``"figure"``, ``"terminal"`` or ``"raw"``.
    suffixes : tuple of str, optional
        Allowed file suffixes (lower case, with the dot).
    stdout : bool
        Whether ``"-"`` (standard output) is allowed.
    extra_files : bool
        Whether the render may write more files beside its own: it is then
        called as ``render(report, path, files)`` with an :class:`ExtraFiles`
        (None for standard output) whose files join the run's transaction.
    """

    option: str
    path: object
    render: Callable
    text: str = "raw"
    suffixes: tuple | None = None
    stdout: bool = True
    extra_files: bool = False


def text_of(module: str, function: str) -> Callable:
    """A ``render`` that imports ``profiler.<module>`` only when called and returns ``function(report)``.

    For outputs whose content is a text built from the report (JSON, CSV,
    GeoJSON, KML writers); keeps heavy modules out of the command's start-up.
    """
    def render(report, path):
        import importlib

        return getattr(importlib.import_module(f"profiler.{module}"), function)(report)

    return render


def summary_output(render: Callable, *paths) -> Output:
    """The terminal summary: to standard output unless one of ``paths`` (the other outputs) already goes there."""
    taken = any(str(p) == "-" for p in paths if p is not None)
    return Output("summary", None if taken else "-", render, "terminal")


def _as_output(item) -> Output:
    if isinstance(item, Output):
        return item
    path, option, render, *rest = item
    return Output(option=option, path=path, render=render, text=rest[0] if rest else "raw")


def check_outputs(outputs: Sequence) -> list[Output]:
    """Refuse bad outputs before any computation; return those asked for.

    Checks each path (not empty or blank, folder exists and is writable,
    not a folder, allowed suffix, ``-`` only where allowed), that at most one
    output goes to standard output and that no two outputs share a file.
    ``outputs`` holds :class:`Output` objects or ``(path, option, render[, text])``
    tuples; those whose path is None are not asked for.
    """
    active = [o for o in map(_as_output, outputs) if o.path is not None]
    seen: dict[str, str] = {}
    to_stdout = []
    for o in active:
        if str(o.path) == "-":
            if not o.stdout:
                raise ProfilerError(f"{o.option} cannot go to standard output ('-'); give a file name")
            to_stdout.append(o.option)
            continue
        check_output_path(o.path, o.suffixes, o.option, o.stdout)
        directory = _folder(Path(o.path))
        if not os.access(directory, os.W_OK | os.X_OK):
            raise ProfilerError(f"cannot write {o.path} ({o.option}): folder {directory} is not writable; "
                                "choose a folder you can write to")
        key = os.path.normcase(os.path.abspath(o.path))
        if key in seen:
            raise ProfilerError(f"{seen[key]} and {o.option} both write {o.path}; give each output its own file")
        seen[key] = o.option
    if len(to_stdout) > 1:
        raise ProfilerError(f"only one output can go to standard output ('-'); {' and '.join(to_stdout)} both do")
    return active


class Transaction:
    """Files written together: each to a temporary file beside its target, all renamed into place by
    :meth:`commit`, all temporary files removed by :meth:`abort`.

    Files marked with :meth:`remove_on_commit` (stale files of an earlier run) are deleted only on
    commit, after the renames, so a failed run changes no file at all.
    """

    def __init__(self):
        self._temps: list[tuple[Path, Path]] = []        # (temporary file, target)
        self._remove: list[Path] = []

    def claim(self, target, option: str | None = None) -> Path:
        """A new empty temporary file beside ``target`` (same suffix), renamed to ``target`` on commit.

        Raises
        ------
        ProfilerError
            Another file of this run already goes to ``target``, or its folder is missing or not writable.
        """
        target = Path(target)
        key = os.path.normcase(os.path.abspath(target))
        if any(os.path.normcase(os.path.abspath(t)) == key for _, t in self._temps):
            what = f"{target} ({option})" if option else f"{target}"
            raise ProfilerError(f"cannot write {what}: another output of this run writes it; "
                                "give each output its own file")
        tmp = _temp_beside(target, option)
        self._temps.append((tmp, target))
        return tmp

    def remove_on_commit(self, path) -> None:
        """Delete ``path`` when the run commits (a stale file of an earlier run); never on abort."""
        self._remove.append(Path(path))

    def commit(self) -> None:
        """Rename every temporary file into place, then delete the stale files."""
        for tmp, target in self._temps:
            os.replace(tmp, target)
        written = {os.path.normcase(os.path.abspath(t)) for _, t in self._temps}
        for path in self._remove:
            if os.path.normcase(os.path.abspath(path)) not in written:
                with contextlib.suppress(FileNotFoundError):
                    path.unlink()
        self._temps, self._remove = [], []

    def abort(self) -> None:
        """Remove every temporary file; no target is touched."""
        for tmp, _ in self._temps:
            with contextlib.suppress(OSError):
                tmp.unlink()
        self._temps, self._remove = [], []


@dataclass(frozen=True)
class ExtraFiles:
    """What a render with ``extra_files`` may write beyond its own output, inside the run's transaction.

    Attributes
    ----------
    target : pathlib.Path
        The output's own file (the render writes its temporary file; this is the final name).
    option : str
        The option that asked for it, named in messages.
    transaction : Transaction
        The run's files: :meth:`claim` a temporary file for another target beside it,
        :meth:`remove_on_commit` a stale file of an earlier run.
    """

    target: Path
    option: str
    transaction: Transaction

    def claim(self, path) -> Path:
        """A temporary file that becomes ``path`` when every output of the run succeeded."""
        return self.transaction.claim(path, self.option)

    def remove_on_commit(self, path) -> None:
        """Delete ``path`` (a stale file) when every output of the run succeeded."""
        self.transaction.remove_on_commit(path)


def _render_into(o: Output, report, tmp: Path, files: ExtraFiles | None = None) -> None:
    from ..textsafe import safe_strings

    args = (files,) if o.extra_files else ()
    content = o.render(safe_strings(report, o.text), tmp, *args)
    try:
        if isinstance(content, str):
            tmp.write_text(content, encoding="utf-8", newline="")
        elif isinstance(content, (bytes, bytearray)):
            tmp.write_bytes(content)
    except OSError as exc:
        raise ProfilerError(f"cannot write {o.path} ({o.option}): {exc.strerror or exc}") from None


def write_outputs(outputs: Sequence, report=None) -> None:
    """Write every output of a run, all or nothing.

    Each output is rendered to a temporary file beside its target (standard
    output: in a private temporary folder); only when every one succeeded
    are they renamed into place, and only then is standard output printed.
    On any failure all temporary files are removed and no file is changed.
    An output with ``extra_files`` may write more files beside its own (a
    sheet's continuation sheets) and delete stale ones of an earlier run,
    in the same transaction (:class:`ExtraFiles`).

    Parameters
    ----------
    outputs : sequence
        :class:`Output` objects or ``(path, option, render[, text])`` tuples;
        entries whose path is None are skipped.  Checked with
        :func:`check_outputs` first (call it before computing, too).
    report : dict, optional
        Passed to every ``render`` after its strings were made safe for the
        output's ``text`` format.
    """
    active = check_outputs(outputs)
    files = Transaction()
    stdout_tmp = None
    with tempfile.TemporaryDirectory(prefix="profiler-") as private:
        try:
            for o in active:
                extra = None
                if str(o.path) == "-":
                    tmp = Path(private) / f"stdout{o.suffixes[0] if o.suffixes else '.txt'}"
                    stdout_tmp = tmp
                else:
                    tmp = files.claim(o.path, o.option)
                    extra = ExtraFiles(Path(o.path), o.option, files)
                _render_into(o, report, tmp, extra)
            files.commit()
        except BaseException:
            files.abort()
            raise
        if stdout_tmp is not None:
            _print_bytes(stdout_tmp.read_bytes())


def _print_bytes(data: bytes) -> None:
    """Write bytes to standard output (UTF-8 text whatever the terminal's encoding)."""
    try:
        sys.stdout.flush()
        buffer = getattr(sys.stdout, "buffer", None)
        if buffer is not None:
            buffer.write(data)
            buffer.flush()
        else:  # a text-only stream (some test harnesses)
            sys.stdout.write(data.decode("utf-8", errors="replace"))
            sys.stdout.flush()
    except BrokenPipeError:  # the reader stopped early (`| head`): not an error of this run
        with contextlib.suppress(OSError):
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
