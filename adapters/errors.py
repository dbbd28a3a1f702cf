"""Input errors that name the file, the line and the column."""

from __future__ import annotations

import tomllib
from pathlib import Path


class InputError(Exception):
    """A problem in an input file, located as precisely as the file allows.

    ``line`` is the 1-based line of the file (the header is line 1), or None when
    the problem concerns the whole file; ``column`` is the column as the file names it.
    """

    def __init__(self, file: str, message: str, line: int | None = None, column: str | None = None):
        self.file = str(file)
        self.line = line
        self.column = column
        self.detail = message
        where = [self.file]
        if line is not None:
            where.append(f"line {line}")
        if column is not None:
            where.append(f"column '{column}'")
        super().__init__(f"{', '.join(where)}: {message}")


def read_toml(path, what: str) -> dict:
    """A TOML file as a dict; a missing or malformed file is an InputError naming it."""
    from postproc.adapters import digests  # (digests raises InputError: imported here, not at the top)

    path = Path(path)
    try:
        return tomllib.loads(digests.read_bytes(path).decode("utf-8-sig"))  # a BOM (Windows editors) is fine
    except IsADirectoryError:
        raise InputError(path, f"is a folder, not a {what} file") from None
    except FileNotFoundError:
        raise InputError(path, f"{what} file not found") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError(path, f"not a valid TOML file ({exc})") from None
