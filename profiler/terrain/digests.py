"""Provenance digests: the SHA-256 of every elevation file a report cites, each file hashed once.

A report names the elevation files it used with their SHA-256 so that the
result can be reproduced from the same data.  Hashing a 1° × 1° 1″ tile
(about 30 MB) takes some 20-30 ms; :class:`FileDigests` runs it in
background threads (``hashlib`` and file reads release the GIL), so a
command can start hashing the files it was given before it imports the
numerical libraries and opens the data, and the digest is ready when the
report is written.  Only ``hashlib``, ``os`` and ``threading`` are imported,
so starting costs nothing at start-up.

The object is passed explicitly (``ElevationModel.open(..., digests=...)``);
there is no module-level cache.
"""

from __future__ import annotations

import hashlib
import os
import threading

#: Bytes read per ``update`` call; large reads keep the GIL released for long stretches.
CHUNK_BYTES = 1 << 22


def file_sha256(path) -> str:
    """SHA-256 of a file's bytes [hex].

    Parameters
    ----------
    path : str or os.PathLike
        A regular file.

    Returns
    -------
    str
        64 hexadecimal digits.

    References
    ----------
    FIPS PUB 180-4, Secure Hash Standard (SHA-256), via :mod:`hashlib`.
    """
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(CHUNK_BYTES), b""):
            digest.update(chunk)
    return digest.hexdigest()


def _key(path) -> str:
    return os.path.realpath(os.fspath(path))


class FileDigests:
    """SHA-256 of files, each computed once, in background threads when started early.

    :meth:`start` begins hashing regular files (folders and missing paths are
    skipped: their files are known only once the elevation data is opened,
    and a missing file is reported by the opening); :meth:`sha256` waits for
    a started digest or computes it in the calling thread.
    """

    def __init__(self):
        self._done: dict[str, str] = {}
        self._running: dict[str, tuple[threading.Thread, dict]] = {}
        self._lock = threading.Lock()

    def start(self, paths) -> None:
        """Start hashing, in the background, every path of ``paths`` that is a regular file.

        Parameters
        ----------
        paths : iterable of str or path-like
            Files to hash; folders and missing paths are skipped.
        """
        for path in paths:
            try:
                if not os.path.isfile(path):
                    continue
            except (TypeError, ValueError):
                continue
            key = _key(path)
            with self._lock:
                if key in self._done or key in self._running:
                    continue
                box: dict = {}
                thread = threading.Thread(target=_hash_into, args=(key, box), name="profiler-sha256", daemon=True)
                self._running[key] = (thread, box)
            thread.start()

    def sha256(self, path) -> str:
        """SHA-256 of the file at ``path`` [hex]; raises OSError if it cannot be read.

        Parameters
        ----------
        path : str or path-like
            The file.

        Returns
        -------
        str
            Hex digest (64 characters).

        Raises
        ------
        OSError
            If the file cannot be read.

        References
        ----------
        .. [1] NIST FIPS 180-4, Secure Hash Standard, section 6.2 (SHA-256).
        """
        key = _key(path)
        with self._lock:
            if key in self._done:
                return self._done[key]
            pending = self._running.pop(key, None)
        hexdigest = None
        if pending is not None:
            thread, box = pending
            thread.join()
            hexdigest = box.get("hex")
        if hexdigest is None:  # not started, or the background read failed: hash here and let errors show
            hexdigest = file_sha256(key)
        with self._lock:
            self._done[key] = hexdigest
        return hexdigest


def _hash_into(path: str, box: dict) -> None:
    try:
        box["hex"] = file_sha256(path)
    except OSError:
        pass  # FileDigests.sha256 hashes again in the caller's thread and reports the error there
