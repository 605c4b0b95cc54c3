"""Internal helpers shared across heronframe."""

import warnings


def warn_deprecated(what, instead):
    warnings.warn(f"{what} is deprecated, use {instead}", FutureWarning, stacklevel=3)
