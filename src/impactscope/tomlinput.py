"""Reading a TOML input of ours (the change list, the gate's policy): the file, its encoding and
its syntax, each failure one message that names the file and the fix.

Only the reading is shared; what the tables mean stays with each format's own module.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from impactscope.errors import InputError


@dataclass(frozen=True)
class TomlInput:
    """How messages name one kind of TOML input, and the error they are raised as."""

    what: str  # "change list", "policy"
    missing: str  # how to fix a path that does not exist
    nesting: str  # how deep the format nests, for a file nested too deeply to read
    error: type[InputError]

    def read(self, path: str | os.PathLike[str]) -> bytes:
        p = Path(path)
        try:
            return p.read_bytes()
        except FileNotFoundError:
            raise self.error(f"{p}: {self.what} not found; {self.missing}") from None
        except OSError as exc:
            raise self.error(f"{p}: cannot read the {self.what} ({exc.strerror})") from None

    def parse(self, raw: bytes, where: str) -> tuple[str, dict[str, Any]]:
        """The text and its tables."""
        try:
            text = raw.decode("utf-8")
            return text, tomllib.loads(text)
        except UnicodeDecodeError as exc:
            raise self.error(f"{where}: not UTF-8 text (byte {exc.start}); save the {self.what} as UTF-8") from None
        except tomllib.TOMLDecodeError as exc:
            # tomllib's message already carries "(at line N, column M)".
            raise self.error(f"{where}: invalid TOML: {exc}") from None
        except RecursionError:
            # tomllib reads nested arrays and inline tables recursively: a hostile file can exhaust it.
            raise self.error(f"{where}: TOML nested too deeply to read; {self.nesting}") from None
