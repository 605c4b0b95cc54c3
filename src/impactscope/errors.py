"""The one base class of the errors that are the user's to fix.

Every error this package raises for bad input (a change list, a corpus root, a `--limit`, a
results file, a weights file, a library source, ...) subclasses `InputError`; its message says
what is wrong, where, and how to fix it, on one line. The command line prints that line and exits
with 2. Any other exception, a plain `ValueError` included, is a bug in impactscope, and the
command line says so (exit 3).

`InputError` subclasses `ValueError`, as `packaging`'s `InvalidVersion` does, so callers that
already catch `ValueError` keep working.
"""

from __future__ import annotations


class InputError(ValueError):
    """Input the user can correct; the message names what, where and the fix."""
