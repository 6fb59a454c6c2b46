"""SHA-512 of a dataset file, formed in file order from the reads that are made anyway.

SigMF's ``core:sha512`` is the SHA-512 of the whole dataset file.  Checking it
with a separate read before the analysis reads the file again doubles the
input work on a long capture; here the digest is fed the bytes the pass over
the capture reads (or, where those are converted on reading, the same bytes
read again from the page cache just after), in order, and reads by itself
only what the pass does not: segment headers, trailing bytes, the bytes
between reads.  The hashing runs on a thread of its own beside the pass
(``hashlib`` releases the interpreter lock while it hashes a large buffer,
and so does the file read), so on two cores the pass costs little more than
the hash.  When forked workers share the pass, the parent feeds the digest
in large blocks while they run (:meth:`FileDigest.step`).

References
----------
.. [1] SigMF specification 1.x, ``core:sha512``: the SHA-512 of the dataset
   file (the ``sigmf`` package computes it over the whole file).
.. [2] FIPS 180-4, Secure Hash Standard (SHA-512); ``hashlib.sha512``.
"""

from __future__ import annotations

import hashlib
import os
import queue
import threading
from pathlib import Path

__all__ = ["BLOCK_BYTES", "FileDigest", "CaptureDigest", "file_sha512"]

#: Bytes read and hashed at a time where the digest reads by itself.
BLOCK_BYTES = 1 << 24
#: Bytes of the pass's reads that may wait for the hashing thread (the pass
#: waits beyond that, so memory does not grow with the capture).
QUEUE_BYTES = 1 << 24


class FileDigest:
    """SHA-512 of one file, fed its bytes strictly in file order.

    Parameters
    ----------
    path : str or Path
        The file.
    block : int, optional
        Bytes per read where the digest reads by itself (default :data:`BLOCK_BYTES`).

    Notes
    -----
    ``done`` bytes have been hashed.  :meth:`update` takes bytes read
    elsewhere at a file offset: the part beyond ``done`` is hashed (after the
    digest has read any gap before it itself), the part already hashed is
    skipped, so overlapping or repeated reads are harmless.
    """

    def __init__(self, path, block: int | None = None):
        self.path = Path(path)
        self.size = self.path.stat().st_size
        self.block = max(int(block or BLOCK_BYTES), 1)
        self.done = 0
        self._hash = hashlib.sha512()
        self._file = None
        self._buf: memoryview | None = None

    def _read_to(self, end: int) -> None:
        """Read and hash the file's bytes from ``done`` up to ``end`` (clipped to the file)."""
        end = min(int(end), self.size)
        if end <= self.done:
            return
        if self._file is None:
            self._file = open(self.path, "rb", buffering=0)
            self._buf = memoryview(bytearray(min(self.block, max(self.size, 1))))
        while self.done < end:
            want = min(len(self._buf), end - self.done)
            got = os.preadv(self._file.fileno(), [self._buf[:want]], self.done) if hasattr(os, "preadv") \
                else self._pread(want)
            if got <= 0:                     # the file shrank while it was read
                self.size = self.done
                break
            self._hash.update(self._buf[:got])
            self.done += got

    def _pread(self, want: int) -> int:
        self._file.seek(self.done)
        return self._file.readinto(self._buf[:want])

    def update(self, offset: int, data) -> None:
        """Hash ``data``, the file's bytes from ``offset`` on, where they extend what is hashed."""
        mv = memoryview(data).cast("B")
        offset = int(offset)
        if offset > self.done:
            self._read_to(offset)
            if offset > self.done:           # the file ended before the offset
                return
        skip = self.done - offset
        if skip < len(mv):
            take = mv[skip:min(len(mv), self.size - offset)]
            self._hash.update(take)
            self.done += len(take)

    def advance(self, end: int) -> None:
        """Hash the file up to byte ``end``, reading what has not been fed."""
        self._read_to(end)

    def step(self) -> bool:
        """Read and hash one more block; True while bytes remain."""
        self._read_to(self.done + self.block)
        return self.done < self.size

    def hexdigest(self) -> str:
        """The SHA-512 of the whole file (whatever is left is read now), lower-case hex."""
        self._read_to(self.size)
        self.close()
        return self._hash.hexdigest()

    def close(self) -> None:
        if self._file is not None:
            self._file.close()
            self._file = None
            self._buf = None


class CaptureDigest(FileDigest):
    """The digest of a capture's data file, fed by the pass's sample reads, hashed on a thread of its own.

    Parameters
    ----------
    path : str or Path
        The data file.
    sample_bytes : callable
        ``sample_bytes(a, b) -> (runs, end)`` (:meth:`analyzer.capture.Capture.sample_bytes`):
        where the samples ``a <= n < b`` lie in the file; ``runs`` (None
        unless the array read holds exactly the file's bytes) lists
        ``(file_offset, i, j)`` for the array's samples ``i <= k < j``.
    block : int, optional
        Bytes per read where the digest reads by itself.

    Notes
    -----
    :meth:`seen` hands each read to the hashing thread, which is started at
    the first one (so a process that forks workers for the pass, and only
    calls :meth:`~FileDigest.step`, starts no thread) and joined by
    :meth:`hexdigest` or :meth:`close`.  The arrays handed over are only
    read, never changed.
    """

    def __init__(self, path, sample_bytes, block: int | None = None):
        super().__init__(path, block)
        self._where = sample_bytes
        self._queue: queue.Queue | None = None
        self._thread: threading.Thread | None = None
        self._error: BaseException | None = None

    def seen(self, pos: int, x) -> None:
        """The samples ``x`` from sample ``pos`` on were just read: hash the file up to their end
        (on the hashing thread; this waits only while :data:`QUEUE_BYTES` of reads are still to hash)."""
        if len(x) == 0:
            return
        if self._thread is None:
            self._queue = queue.Queue(maxsize=max(2, QUEUE_BYTES // max(x.nbytes, 1)))
            self._thread = threading.Thread(target=self._run, name="capture-sha512", daemon=True)
            self._thread.start()
        self._queue.put((pos, x))

    def _run(self) -> None:
        while True:
            item = self._queue.get()
            if item is None:
                return
            if self._error is None:
                try:
                    self._take(*item)
                except BaseException as exc:        # raised again where the digest is read
                    self._error = exc

    def _take(self, pos: int, x) -> None:
        runs, end = self._where(pos, pos + len(x))
        if runs is not None:
            for offset, i, j in runs:        # the very bytes read: nothing is read twice
                self.update(offset, x[i:j])
        else:
            self.advance(end)                # converted on reading: the bytes again, from the page cache

    def _join(self) -> None:
        """Wait for the hashing thread to hash what it was handed, and end it."""
        if self._thread is not None:
            self._queue.put(None)
            self._thread.join()
            self._thread = self._queue = None

    def hexdigest(self) -> str:
        """The SHA-512 of the whole file, lower-case hex (an error the hashing thread met is raised here)."""
        self._join()
        if self._error is not None:
            raise self._error
        return super().hexdigest()

    def close(self) -> None:
        """End the hashing thread and close the file (an error it met is kept for :meth:`hexdigest`)."""
        self._join()
        super().close()


def file_sha512(path, block: int | None = None) -> str:
    """SHA-512 of a whole file read in blocks of ``block`` bytes (lower-case hex)."""
    return FileDigest(path, block).hexdigest()
