"""Output files written whole or not at all.

Every file the command line writes (reports, charts, baked .blend files) is
first written to a temporary file beside it and then renamed over the target:
a full disk, a killed process or an interrupt leaves the old file (or none),
never half of a new one. The rename is atomic on one file system, which a
file beside the target is on.
"""

import contextlib
import errno
import os
import tempfile

from leapwright.core.base.errors import LeapwrightError


class OutputError(LeapwrightError):
    """An output that could not be written (disk full, no permission, no such folder)."""


def reason(exc):
    """An OSError in a few words (``No space left on device``)."""
    return exc.strerror or os.strerror(exc.errno or errno.EIO) if isinstance(exc, OSError) else str(exc)


def _mode_for(path):
    """The permissions the file would have had if written in place (a temporary file has 0600)."""
    try:
        return os.stat(path).st_mode & 0o7777
    except OSError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask


@contextlib.contextmanager
def replacing(path, what="the output"):
    """A temporary path beside ``path``; renamed over ``path`` when the block ends without error.

    Raises
    ------
    OutputError
        When the folder cannot take the file, naming the path and the reason.
    """
    path = os.path.abspath(str(path))
    folder, name = os.path.split(path)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".part" + os.path.splitext(name)[1], dir=folder)
        os.close(fd)
    except OSError as exc:
        raise OutputError(f"cannot write {what} to {path!r}: {reason(exc)}; choose a writable folder") from None
    try:
        yield tmp
        os.chmod(tmp, _mode_for(path))
        os.replace(tmp, path)
    except OSError as exc:
        raise OutputError(f"cannot write {what} to {path!r}: {reason(exc)}; nothing was changed there") from None
    finally:
        with contextlib.suppress(OSError):
            os.unlink(tmp)


def write_text(path, text, what="the report"):
    """Write ``text`` to ``path`` whole (see :func:`replacing`)."""
    with replacing(path, what) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
