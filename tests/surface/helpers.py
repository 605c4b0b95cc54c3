"""Small helpers shared by the surface tests."""

from __future__ import annotations

import textwrap
from importlib import resources
from pathlib import Path

# The demo library's two releases, shipped inside the impactscope.demo package: 2.4 (what the
# demo corpus was written against) and 3.0 (derived from it; see src/impactscope/demo/).
_DEMO = Path(str(resources.files("impactscope.demo")))
OLD = _DEMO / "heronframe"
NEW = _DEMO / "heronframe_3_0" / "heronframe"


def write_tree(root: Path, files: dict[str, str]) -> Path:
    """Write {relative path: source} under root (sources are dedented) and return root."""
    for rel, text in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(textwrap.dedent(text).lstrip("\n"), encoding="utf-8")
    return root
