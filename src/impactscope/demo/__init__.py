"""The demo scenario: the fictional library heronframe, its 3.0 change list, and a generated corpus.

- `changes.toml`: what heronframe 3.0 changes (see `changes_path`);
- `heronframe/`: the library's 2.4 source, as downstream projects would have installed it (the
  change list's `[library] source`, and what the surface tests read);
- `heronframe_3_0/heronframe/`: the 3.0 source, derived from 2.4 by exactly the changes in
  `changes.toml` (for `impactscope compare` and the drafted change list);
- `generate.generate_corpus`: fictional downstream projects plus the ground truth a correct
  scan of them reports.
"""

from __future__ import annotations

from importlib import resources
from importlib.resources.abc import Traversable

from .generate import ExpectedSite, GroundTruth, LegacySite, ProjectTruth, generate_corpus, load_truth, truth_path

__all__ = [
    "ExpectedSite",
    "GroundTruth",
    "LegacySite",
    "ProjectTruth",
    "changes_resource",
    "generate_corpus",
    "load_truth",
    "truth_path",
]


def changes_resource() -> Traversable:
    """The demo change list inside the installed package (use `importlib.resources.as_file`)."""
    return resources.files(__name__) / "changes.toml"
