"""Model files: TOML in (``tomllib``), TOML out (a small writer for our schema), atomic saves."""

from __future__ import annotations

import math
import os
import secrets
import stat
import tomllib
from pathlib import Path
from typing import Any

from ..errors import ModelError
from .line import Line

__all__ = ["load", "save", "dumps"]


def load(path: str | os.PathLike) -> Line:
    """Read a model TOML file into a validated :class:`Line`."""
    p = _path(path)
    if p.is_dir():
        raise ModelError("path", str(p), "", "is a folder, not a model file")
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise ModelError("path", str(p), "", f"cannot read the model file ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise ModelError("path", str(p), "", "the model file is not UTF-8 text") from None
    try:
        spec = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ModelError("path", str(p), "", f"malformed TOML: {exc}") from None
    try:
        return Line.from_dict(spec)
    except ModelError as exc:
        raise ModelError(exc.key, exc.value, exc.unit, f"{exc.reason} (in {p})") from None


def save(line: Line, path: str | os.PathLike) -> Path:
    """Write ``line`` as TOML, atomically: a temporary file beside the target,
    flushed to disk, then renamed over it, so a crash never leaves half a model."""
    if not isinstance(line, Line):
        raise ModelError("line", type(line).__name__, "", "dl.save needs a dampline.Line")
    p = _path(path)
    if p.is_dir():
        raise ModelError("path", str(p), "", "is a folder; give a file name such as "
                         f"{str(p / 'model.toml')!r}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise ModelError("path", str(p), "", f"its folder {str(folder)!r} does not exist")
    return write_text_atomic(p, dumps(line))


def _path(path) -> Path:
    """A file path from text or a path object (not None, not a number)."""
    if isinstance(path, bytes):
        path = os.fsdecode(path)
    if not isinstance(path, (str, os.PathLike)) or not str(path):
        raise ModelError("path", path, "", "must be a file path (text or pathlib.Path)")
    return Path(path)


def write_text_atomic(path: str | os.PathLike, text: str) -> Path:
    """Write text to ``path`` atomically (temporary file beside it, fsync, rename):
    a crash or a full disk never leaves a half-written file in its place."""
    p = Path(path)
    fd, tmp = _open_beside(p)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            if p.exists():   # an overwrite keeps the file's permissions
                os.chmod(tmp, stat.S_IMODE(p.stat().st_mode))
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return p


def _open_beside(p: Path) -> tuple[int, str]:
    """Create a new temporary file beside ``p`` with the permissions a plain open
    gives (0666 less the umask): mkstemp's 0600 would make a saved model, once
    renamed, unreadable to the colleagues who are meant to re-run it."""
    directory = p.parent if str(p.parent) else Path(".")
    while True:
        tmp = directory / f".{p.name}.{secrets.token_hex(6)}.tmp"
        try:
            return os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666), str(tmp)
        except FileExistsError:
            continue


_ESCAPES = {"\\": "\\\\", '"': '\\"', "\n": "\\n", "\t": "\\t", "\r": "\\r"}


def _escape(ch: str) -> str:
    # TOML basic strings allow no raw control characters (a title pasted with \r
    # would otherwise save a file that cannot be loaded again)
    if ch in _ESCAPES:
        return _ESCAPES[ch]
    return f"\\u{ord(ch):04X}" if ord(ch) < 32 or ord(ch) == 127 else ch


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise ModelError("value", v, "", "cannot write a non-finite number")
        return repr(v)
    if isinstance(v, str):
        return '"' + "".join(_escape(ch) for ch in v) + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_value(x)}" for k, x in v.items()) + " }"
    raise ModelError("value", v, "", "cannot be written to TOML")


def dumps(line: Line) -> str:
    """The model as TOML text (the normalised dict of :meth:`Line.to_dict`)."""
    d = line.to_dict()
    out = []
    for k in ("title", "kind"):
        if k in d:
            out.append(f"{k} = {_value(d[k])}")
    for seg in d["segments"]:
        out.append("\n[[segments]]")
        out += [f"{k} = {_value(v)}" for k, v in seg.items()]
    out.append("\n[ends]")
    out += [f"{k} = {_value(v)}" for k, v in d["ends"].items()]
    for att in d.get("attachments", []):
        out.append("\n[[attachments]]")
        out += [f"{k} = {_value(v)}" for k, v in att.items()]
    out.append("\n[damping]")
    out += [f"{k} = {_value(v)}" for k, v in d["damping"].items()]
    return "\n".join(out) + "\n"
