"""Opening files named by an untrusted repository, for reading and for writing.

lintamp runs in CI on pull requests: the netlists, the config, the baseline and the
file names are written by whoever opened the pull request, and so are symbolic
links, pipes and folders committed where a file is expected.  Every file lintamp
opens by a name that such a repository can influence goes through this module:

- :func:`open_regular` / :func:`read_regular`: read only a regular file (never a
  pipe, device or folder; never blocking on the open), no bigger than a limit, and,
  given ``roots``, only where its real location lies inside one of them, so that a
  committed symlink cannot lead a read out of the project.
- :func:`write_atomic`: write a report, baseline or cache entry through a temporary
  file and a rename; never through a symbolic link (the link itself, or a linked
  folder inside the current folder), never over a pipe or device, never over a file
  being checked; keeps the old file's permissions (a new one gets the umask's).
- :func:`private_folder`: a folder lintamp owns (the cache), refused when it or a
  folder in it is a symbolic link.
- :func:`include_root_inside`: a config-given include path must lie inside the
  repository (command-line ``--include-path`` is the maintainer's and is not judged).

The checks are made on the open file where that is possible (``fstat``), so a name
swapped between the check and the open changes nothing.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path
from typing import BinaryIO, Iterable

# The biggest netlist file lintamp reads (the reader's limit; the cache hashes no more).
MAX_NETLIST_BYTES = 256 * 1024 * 1024

_O_NONBLOCK = getattr(os, "O_NONBLOCK", 0)
_O_CLOEXEC = getattr(os, "O_CLOEXEC", 0)
_O_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)


class PathRefused(OSError):
    """A file lintamp will not read or write; ``strerror`` says why, in words."""

    def __init__(self, path: str | Path, why: str):
        super().__init__(0, why, str(path))

    def __str__(self) -> str:
        return f"{self.filename}: {self.strerror}"


def inside(real: Path, roots: Iterable[Path]) -> bool:
    """Whether the real path ``real`` is one of ``roots`` or lies below one."""
    return any(real == root or root in real.parents for root in roots)


def _what(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def escapes_by_symlink(path: Path, roots: Iterable[Path]) -> bool:
    """Whether a symbolic link takes ``path`` out of ``roots``.

    True when ``path`` really lies outside every root while its name was written
    inside one, or its last part is a link: a committed link that leads out.  A
    file named outside the roots with no link on the way is not judged here (the
    user named it).
    """
    roots = [Path(r) for r in roots]
    if not roots:
        return False
    try:
        real = Path(os.path.realpath(path))
    except (OSError, ValueError):
        return True
    if inside(real, roots):
        return False
    absolute = Path(os.path.abspath(path))
    try:
        if absolute.is_symlink():
            return True
    except (OSError, ValueError):
        return True
    parent_real = Path(os.path.realpath(absolute.parent))
    # the name was written inside a root (up to links above the root itself) but a
    # linked folder on the way leads out
    return not inside(parent_real, roots) and any(_lexically_inside(absolute, r) for r in roots)


def _lexically_inside(absolute: Path, root: Path) -> bool:
    try:
        absolute.relative_to(root)
        return True
    except ValueError:
        pass
    # the root is a real path; the name may be written through a link above it
    # (a checkout under a linked home folder): compare from the first real folder
    for folder in absolute.parents:
        try:
            if Path(os.path.realpath(folder)) == root:
                return True
        except (OSError, ValueError):
            return False
    return False


def open_regular(path: str | Path, *, roots: Iterable[Path] = (), limit: int | None = None) -> BinaryIO:
    """Open ``path`` for reading if it is a regular file (within ``limit`` bytes).

    Opened non-blocking, so a pipe cannot stall the open itself; then the open file
    (not the name) must be a regular file.  With ``roots``, a file that a symbolic
    link leads out of them is refused before it is opened.

    Raises
    ------
    OSError
        The file cannot be opened; or it is refused (:class:`PathRefused`, whose
        ``strerror`` says why: a folder, device or pipe, a link out, too big).
    """
    roots = tuple(roots)
    if roots and escapes_by_symlink(Path(path), roots):
        raise PathRefused(path, "it is a symbolic link to a place outside the project; not read")
    fd = os.open(path, os.O_RDONLY | _O_NONBLOCK | _O_CLOEXEC)
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise PathRefused(path, f"it is {_what(info.st_mode)}, not a regular file")
        if limit is not None and info.st_size > limit:
            raise PathRefused(path, f"it is {info.st_size} bytes, over the {limit}-byte limit; not read")
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_regular(path: str | Path, *, limit: int, roots: Iterable[Path] = ()) -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes (see :func:`open_regular`).

    The limit holds even for a file that grows while it is read.
    """
    with open_regular(path, roots=roots, limit=limit) as handle:
        data = handle.read(limit + 1)
    if len(data) > limit:
        raise PathRefused(path, f"it is over the {limit}-byte limit; not read")
    return data


MAX_TABLE_BYTES = 64 * 1024 * 1024  # an operating-point table bigger than this is not one


def read_text(path: str | Path, *, limit: int = MAX_TABLE_BYTES, roots: Iterable[Path] = ()) -> str:
    """:func:`read_regular`, decoded as UTF-8 when valid, else latin-1 (for ``--op``
    tables: a pipe or a device such as /dev/zero is refused without blocking)."""
    data = read_regular(path, limit=limit, roots=roots)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _same_file(a: os.stat_result, b: os.stat_result) -> bool:
    return (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino)


def check_write_target(path: str | Path, *, protect: Iterable[str | Path] = ()) -> Path:
    """Refuse to write ``path`` where that would go through a link or over an input.

    Refused: ``path`` itself a symbolic link; a folder on the way to it that is a
    symbolic link, from the current folder down (a committed ``reports -> /etc``);
    an existing ``path`` that is not a regular file; a file among ``protect`` (the
    netlists being checked and the files they include), by identity, not by name.

    Raises
    ------
    PathRefused
        With the reason, for a one-line message.
    """
    path = Path(path)
    try:
        info = os.lstat(path)
    except FileNotFoundError:
        info = None
    except (OSError, ValueError) as exc:
        raise PathRefused(path, f"cannot look at it ({getattr(exc, 'strerror', None) or exc})") from None
    if info is not None:
        if stat.S_ISLNK(info.st_mode):
            raise PathRefused(path, "it is a symbolic link; lintamp does not write through links")
        if not stat.S_ISREG(info.st_mode):
            raise PathRefused(path, f"it is {_what(info.st_mode)}, not a regular file")
        for other in protect:
            try:
                if _same_file(info, os.stat(other)):
                    raise PathRefused(path, "it is a netlist being checked or one it includes; not overwritten")
            except (OSError, ValueError) as exc:
                if isinstance(exc, PathRefused):
                    raise
    folder = Path(os.path.abspath(path)).parent
    cwd = Path(os.path.abspath(os.getcwd()))
    try:
        below = folder.relative_to(cwd)
    except ValueError:
        below = None
    if below is not None:
        walk = cwd
        for part in below.parts:
            walk = walk / part
            try:
                linked = walk.is_symlink()
            except OSError:
                break
            if linked:
                raise PathRefused(path, f"its folder {os.path.relpath(walk)} is a symbolic link; "
                                  "lintamp does not write through links")
    return path


def write_atomic(path: str | Path, data: bytes, *, protect: Iterable[str | Path] = (),
                 durable: bool = True) -> None:
    """Replace ``path`` with ``data``: readers see the old file or the new, never half.

    The bytes go to a new temporary file beside the target (created exclusively, so
    never an existing file or link), which gets the old file's permission bits (a
    new file gets what the umask allows, as ``open`` would give it), then is renamed
    over the target; the rename replaces a name, never writes through a link.
    ``durable`` flushes the file and its folder to disk (a cache entry that is lost
    in a crash is only a miss, so the cache skips it).  See :func:`check_write_target`
    for what is refused.

    Raises
    ------
    OSError
        :class:`PathRefused` for a refused target; the system's error otherwise. If
        anything fails, the old file stays as it was.
    """
    import tempfile  # here: reading never needs it

    path = check_write_target(path, protect=protect)
    folder = path.parent if str(path.parent) else Path(".")
    try:
        mode = stat.S_IMODE(os.stat(path).st_mode)
    except FileNotFoundError:
        umask = os.umask(0)
        os.umask(umask)
        mode = 0o666 & ~umask
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name[:80]}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            os.fchmod(handle.fileno(), mode)
            handle.write(data)
            if durable:
                handle.flush()
                os.fsync(handle.fileno())
        os.replace(tmp_name, path)
    except BaseException:
        try:
            os.unlink(tmp_name)
        except OSError:
            pass
        raise
    if durable:
        _fsync_folder(folder)


def _fsync_folder(folder: Path) -> None:
    # Makes the rename itself durable; not every platform lets a folder be opened.
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def private_folder(folder: Path, *, create: bool = True) -> bool:
    """Whether ``folder`` is a real folder (made if absent and ``create``), not a link.

    A folder lintamp keeps its own files in (the cache) must not be a link a
    repository committed to send the writes elsewhere; nor may its parent be one
    below the current folder.
    """
    folder = Path(folder)
    try:
        info = os.lstat(folder)
    except FileNotFoundError:
        if not create:
            return False
        try:
            check_write_target(folder)
            folder.mkdir(exist_ok=True)
            info = os.lstat(folder)
        except OSError:
            return False
    except (OSError, ValueError):
        return False
    return stat.S_ISDIR(info.st_mode)


def include_root_inside(base: Path, given: str, repository: Path) -> Path:
    """The folder a config's ``include-paths`` entry names, which must lie in the repository.

    ``base`` is the config file's folder (relative entries start there);
    ``repository`` the work tree holding it.  A committed config is the pull
    request's to write, so an entry that leads outside (``"/"``, ``"../.."``, a
    link out) would open every readable file to ``.include``: refused.  Folders
    outside the repository are the maintainer's to add, with ``--include-path``.

    Raises
    ------
    ValueError
        With the reason, for the config error message.
    """
    if "\0" in given:
        raise ValueError("holds a NUL character")
    try:
        real = Path(os.path.realpath(Path(base) / given))
    except (OSError, ValueError) as exc:
        raise ValueError(f"cannot be resolved ({exc})") from None
    repository = Path(os.path.realpath(repository))
    if not inside(real, [repository]):
        raise ValueError(f"names {given!r}, which resolves outside the repository {repository}")
    return real


def repository_of(folder: Path) -> Path:
    """The git work tree holding ``folder`` (the nearest folder up with ``.git``), else
    ``folder`` itself.  A pull request cannot add a ``.git`` above its checkout."""
    folder = Path(os.path.realpath(folder))
    for candidate in (folder, *folder.parents):
        if (candidate / ".git").exists():
            return candidate
    return folder
