"""Read a real library's surface (source or stubs, never imported) and print what it knows.

    python examples/surface_real.py SOURCE [--library NAME] [--classes A,B] [--changes LIST] [--tests]

SOURCE is a package folder, a stub folder (`NAME-stubs`) or a folder holding one. Printed: the
module and member counts, build time (wall and CPU) and peak RSS; for each class in --classes, how
many of its public members (inherited included) have one return class, several (overloads or
unions), or none; with --changes, whether that change list passes the member check. Use it on
files unpacked from a downloaded wheel, e.g. `pip download --only-binary=:all: --no-deps pandas==1.5.3`.
"""

from __future__ import annotations

import argparse
import resource
import time

from impactscope.changes import load_change_list
from impactscope.surface import build_surface
from impactscope.surface.check import check_members


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("source")
    parser.add_argument("--library", default=None, help="import name (default: from the folder)")
    parser.add_argument("--classes", default="", help="comma-separated dotted class names to count")
    parser.add_argument("--changes", default=None, help="a change list to check against the surface")
    parser.add_argument("--tests", action="store_true", help="read `tests` subpackages too")
    args = parser.parse_args()

    start = time.perf_counter()
    surface = build_surface(args.source, args.library, include_tests=args.tests)
    wall = time.perf_counter() - start
    usage = resource.getrusage(resource.RUSAGE_SELF)
    modules = sum(1 for m in surface.members.values() if m.kind == "module")
    print(f"{surface.library}: {modules} modules, {len(surface.members)} members, {len(surface.problems)} unreadable; "
          f"{wall:.2f} s wall, {usage.ru_utime + usage.ru_stime:.2f} s CPU (process), peak RSS {usage.ru_maxrss / 1024:.0f} MB")
    for cls in filter(None, args.classes.split(",")):
        counts = {"one": 0, "several": 0, "none": 0}
        for name in surface.names_in(cls):
            dotted = f"{cls}.{name}"
            member = surface.member(dotted)
            if name.startswith("_") and name != "__getitem__" or member is None or member.kind in ("class", "module"):
                continue
            key = "one" if surface.returns(dotted) else "several" if surface.returns_all(dotted) else "none"
            counts[key] += 1
        print(f"  {cls}: {sum(counts.values())} public members; return class known: one {counts['one']}, "
              f"several {counts['several']}, none {counts['none']}")
    if args.changes:
        check_members(load_change_list(args.changes), surface, args.source)
        print(f"  {args.changes}: every member is in the surface")


if __name__ == "__main__":
    main()
