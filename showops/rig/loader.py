"""Read a rig file (TOML) into the model of its kind."""

from __future__ import annotations

import tomllib
from pathlib import Path

from showops.errors import RigFileError
from showops.rig.fields import TableReader
from showops.rig.kinds import KINDS

#: A rig file is a few kilobytes; refuse anything absurd before parsing it.
MAX_RIG_FILE_BYTES = 1_000_000


def load_rig(path: str | Path):
    """Read and validate the rig file at ``path``.

    :returns: the rig model of the file's kind (e.g. :class:`~showops.rig.model.LinkageRig`).
    :raises RigFileError: when the file cannot be read or any field is wrong.
    """
    path = Path(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise RigFileError(str(path), None, f"cannot read the file ({exc.strerror or exc})") from None
    if len(data) > MAX_RIG_FILE_BYTES:
        raise RigFileError(str(path), None, f"file is {len(data):,} bytes; a rig file is a few kB")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise RigFileError(str(path), None, "not a UTF-8 text file (a rig file is TOML)") from None
    return parse_rig(text, source=str(path))


def parse_rig(text: str, source: str = "<rig>"):
    """Parse rig-file ``text``; ``source`` names it in error messages.

    :raises RigFileError: for invalid TOML, an unknown kind, or any bad field.
    """
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise RigFileError(source, None, f"not valid TOML ({exc})") from None
    top = TableReader(source, "", document)
    if not top.has("kind"):
        raise top.error("kind", f"missing; expected one of {', '.join(sorted(KINDS))}")
    kind = top.raw("kind")
    if not isinstance(kind, str) or kind not in KINDS:
        raise top.error("kind", f"unknown kind {kind!r}; expected one of {', '.join(sorted(KINDS))}")
    return KINDS[kind].read(top, text)
