"""Small helpers shared by the surface tests."""

from __future__ import annotations

import textwrap
from pathlib import Path

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
OLD = FIXTURES / "heronframe_old" / "heronframe"
NEW = FIXTURES / "heronframe_new" / "heronframe"


def write_tree(root: Path, files: dict[str, str]) -> Path:
    """Write {relative path: source} under root (sources are dedented) and return root."""
    for rel, text in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(textwrap.dedent(text).lstrip("\n"), encoding="utf-8")
    return root
