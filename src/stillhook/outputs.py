"""File output at the edge: deterministic JSON text and safe, all-or-nothing folder writes.

The rules every command with ``--out DIR`` follows (one implementation, here):

- :func:`check_out_dir` runs BEFORE any computation: DIR must be a folder that can be created and written, and
  it must be new or empty, or (with ``force``) a folder stillhook wrote before. Errors name DIR and the
  operating system's reason.
- :func:`write_files` writes everything into a temporary folder beside DIR and moves it into place only when
  every file was written. Into a folder stillhook wrote before (``force``), it first removes the files its
  marker lists, then moves the new ones in; a user's own files in that folder are never touched, and a new file
  that would replace one of them is refused.
- Each folder stillhook writes carries the marker :data:`MARKER` (JSON: the files it wrote, sorted), which is
  how stillhook recognises its own folders.
"""

from __future__ import annotations

import errno
import json
import os
import shutil
import tempfile
from pathlib import Path

from stillhook.errors import InputFileError

__all__ = ["MARKER", "check_out_dir", "check_out_file", "to_json", "write_file", "write_files", "write_json"]

#: Marker file stillhook puts in every folder it writes: the list of files it wrote there.
MARKER = ".stillhook-output.json"


def to_json(obj) -> str:
    """Deterministic JSON text (indent 2, no NaN, trailing newline)."""
    return _nested(obj, "") + "\n"


def _nested(value, prefix: str) -> str:
    """to_json's text of ``value`` as it appears nested ``prefix`` deep (every line after the first indented)."""
    try:
        text = json.dumps(value, indent=2, allow_nan=False)
    except ValueError as exc:  # NaN or inf in results is a bug upstream, say so plainly
        raise ValueError(f"result is not finite and cannot be written as JSON: {exc}") from None
    return text.replace("\n", "\n" + prefix) if prefix else text


def write_json(obj: dict, stream, *, streamed: dict | None = None) -> None:
    """Write ``to_json(obj)`` to ``stream`` with the values of ``streamed`` keys taken item by item.

    ``streamed`` maps keys of ``obj`` to iterables (e.g. generators over a million sweep rigs); each such key's
    value is written as the list of the iterable's items without the list ever being held, so the memory stays
    bounded. The text is byte for byte ``to_json({**obj, key: list(items)})``.
    """
    streamed = streamed or {}
    if not obj:
        stream.write("{}\n")
        return
    for n, (key, value) in enumerate(obj.items()):
        stream.write(("{\n" if n == 0 else ",\n") + "  " + json.dumps(key) + ": ")
        if key not in streamed:
            stream.write(_nested(value, "  "))
            continue
        empty = True
        for item in streamed[key]:
            stream.write(("[\n" if empty else ",\n") + "    " + _nested(item, "    "))
            empty = False
        stream.write("[]" if empty else "\n  ]")
    stream.write("\n}\n")


def _reason(exc: OSError) -> str:
    """The operating system's reason, with the path it concerns."""
    text = exc.strerror or errno.errorcode.get(exc.errno or 0, "") or str(exc)
    where = Path(exc.filename) if exc.filename else None
    if exc.errno == errno.ENOENT and where is not None and where.parent.is_dir():
        return f"{text}: {str(where.parent)!r} exists but does not accept new entries there"
    return f"{text} ({where})" if where is not None else text


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _own_files(out: Path) -> list[str] | None:
    """The files stillhook's marker in ``out`` lists, or None when ``out`` has no readable marker."""
    try:
        data = json.loads((out / MARKER).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    files = data.get("files") if isinstance(data, dict) else None
    if not isinstance(files, list) or not all(isinstance(f, str) for f in files):
        return None
    return [f for f in files if not Path(f).is_absolute() and ".." not in Path(f).parts]


def _user_files(out: Path) -> list[str]:
    """Files in ``out`` (recursively, relative names) that stillhook did not write there."""
    own = set(_own_files(out) or ()) | {MARKER}
    found = sorted(str(p.relative_to(out)) for p in out.rglob("*") if not p.is_dir())
    return [f for f in found if f not in own]


def check_out_dir(out_dir, *, force: bool = False) -> Path:
    """Refuse, before any work, an output folder that cannot be used; return it as a Path.

    Allowed: a new path whose folder can be created and written, an empty folder, or with ``force`` a folder
    holding stillhook's marker (:data:`MARKER`). Raises :class:`InputFileError` naming the folder and the reason.
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputFileError(f"output folder {str(out)!r} exists and is not a folder; allowed: a folder or a new path")
    if out.is_dir():
        try:
            entries = list(out.iterdir())
        except OSError as exc:
            raise InputFileError(f"output folder {str(out)!r} cannot be read: {_reason(exc)}") from None
        if entries and not force:
            raise InputFileError(f"output folder {str(out)!r} is not empty; choose a new or empty folder, or give "
                                 "--force to replace what stillhook wrote there before")
        if entries and _own_files(out) is None:
            raise InputFileError(f"output folder {str(out)!r} is not empty and was not written by stillhook "
                                 f"(no {MARKER}); --force replaces only stillhook's own folders; choose a new folder")
    _probe(out)
    return out


def _probe(out: Path) -> None:
    """Create ``out`` and a temporary folder beside it, write a byte, remove what was created."""
    created = []
    try:
        missing = [p for p in (out, *out.parents) if not p.exists()]
        for p in reversed(missing):
            p.mkdir()
            created.append(p)
        tmp = Path(tempfile.mkdtemp(prefix=".stillhook-probe-", dir=out.absolute().parent))
        try:
            (tmp / "probe").write_bytes(b"0")
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
        probe = out / ".stillhook-probe"
        probe.write_bytes(b"0")
        probe.unlink()
    except OSError as exc:
        raise InputFileError(f"output folder {str(out)!r} cannot be created or written: {_reason(exc)}") from None
    finally:
        for p in reversed(created):
            try:
                p.rmdir()
            except OSError:
                pass


def check_out_file(out_file, *, force: bool = False) -> Path:
    """Refuse, before any work, an output file that exists (unless ``force``) or whose folder cannot be written."""
    out = Path(out_file)
    if out.is_dir():
        raise InputFileError(f"output file {str(out)!r} is a folder; allowed: a file name")
    if out.exists() and not force:
        raise InputFileError(f"output file {str(out)!r} exists; give --force to replace it")
    _probe(out.absolute().parent)
    return out


def write_file(out_file, content: str | bytes, *, force: bool = False) -> Path:
    """Write one file all or nothing: a temporary file beside it, renamed over it only when complete."""
    out = check_out_file(out_file, force=force)
    data = content.encode("utf-8") if isinstance(content, str) else content
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".stillhook-{out.name}-", dir=out.absolute().parent)
        try:
            with os.fdopen(fd, "wb") as f:
                f.write(data)
            os.chmod(tmp, 0o666 & ~_umask())
            os.replace(tmp, out)
        finally:
            if os.path.exists(tmp):
                os.unlink(tmp)
    except OSError as exc:
        raise InputFileError(f"output file {str(out)!r} cannot be written: {_reason(exc)}") from None
    return out


def _stage(tmp: Path, files: dict[str, str | bytes]) -> None:
    for name, content in files.items():
        rel = Path(name)
        if rel.is_absolute() or ".." in rel.parts or name == MARKER:
            raise ValueError(f"output name {name!r} must be a relative path inside the folder")
        p = tmp / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(content.encode("utf-8") if isinstance(content, str) else content)
    (tmp / MARKER).write_text(to_json({"written_by": "stillhook", "files": sorted(files)}), encoding="utf-8")


def _replace_own(out: Path, tmp: Path, files: dict) -> None:
    """Into an existing folder: remove stillhook's old files, then move the new ones in."""
    clash = sorted(set(files) & set(_user_files(out)))
    if clash:
        raise InputFileError(f"output folder {str(out)!r} holds files stillhook did not write that the new output "
                             f"would replace ({', '.join(clash[:5])}); nothing was written")
    for old in _own_files(out) or ():
        (out / old).unlink(missing_ok=True)
    for name in [*files, MARKER]:
        dest = out / name
        dest.parent.mkdir(parents=True, exist_ok=True)
        os.replace(tmp / name, dest)


def write_files(out_dir: str | Path, files: dict[str, str | bytes], *, force: bool = False) -> list[Path]:
    """Write ``{relative name: text or bytes}`` into out_dir, all or nothing; return the paths in the order given.

    A new or empty out_dir receives the finished temporary folder by one rename. With ``force``, a folder
    stillhook wrote before gets its old files (as its marker lists them) replaced; other files stay.
    """
    out = check_out_dir(out_dir, force=force)
    parent = out.absolute().parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".stillhook-{out.name}-", dir=parent))
        tmp.chmod(0o777 & ~_umask())
    except OSError as exc:
        raise InputFileError(f"output folder {str(out)!r} cannot be created or written: {_reason(exc)}") from None
    try:
        _stage(tmp, files)
        if out.is_dir() and not any(out.iterdir()):
            try:
                out.rmdir()  # an empty folder is replaced by the finished one in one rename
            except OSError:
                pass  # e.g. the current folder or a mount point: the files are moved in instead
        if not out.exists():
            os.rename(tmp, out)
        else:
            _replace_own(out, tmp, files)
        return [out / name for name in files]
    except OSError as exc:
        raise InputFileError(f"output folder {str(out)!r} cannot be written: {_reason(exc)}") from None
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
