"""Pin downstream releases from before a library's breaking release, as corpus.toml entries.

    python examples/realworld/select_corpus.py --library networkx --before 2023-01-07 pgmpy osmnx:sdist ...

For each name: the newest final release all of whose files were uploaded before `--before` (the
breaking release's date) and on or after `--since`; its pure-Python wheel if it has one
(`py3-none-any` or `py2.py3-none-any`), else its sdist; `NAME:sdist` asks for the sdist. Prints
TOML `[[project]]` tables on stdout and one line per skipped name on stderr. Only the PEP 691 JSON
simple API is read; nothing is downloaded here.
"""

from __future__ import annotations

import argparse
import sys
from collections import defaultdict

from packaging.utils import InvalidSdistFilename, InvalidWheelFilename, parse_sdist_filename, parse_wheel_filename
from packaging.version import Version

from pypi import DistFile, simple_files

PURE_TAGS = {"py3-none-any", "py2.py3-none-any"}


def _version_and_kind(filename: str) -> tuple[Version, str, bool] | None:
    try:
        if filename.endswith(".whl"):
            _, version, _, tags = parse_wheel_filename(filename)
            pure = any(f"{t.interpreter}-{t.abi}-{t.platform}" in PURE_TAGS for t in tags)
            return version, "wheel", pure
        if filename.endswith((".tar.gz", ".zip")):
            _, version = parse_sdist_filename(filename)
            return version, "sdist", False
    except (InvalidWheelFilename, InvalidSdistFilename, ValueError):
        return None
    return None


def choose(name: str, before: str, since: str, want_sdist: bool) -> DistFile | None:
    releases: dict[Version, list[tuple[dict, str, bool]]] = defaultdict(list)
    for entry in simple_files(name):
        if entry.get("yanked"):
            continue
        parsed = _version_and_kind(entry["filename"])
        if parsed is None:
            continue
        version, kind, pure = parsed
        releases[version].append((entry, kind, pure))
    for version in sorted(releases, reverse=True):
        if version.is_prerelease or version.is_devrelease:
            continue
        files = releases[version]
        times = [entry.get("upload-time", "") for entry, _, _ in files]
        if not all(since <= t[:10] < before for t in times):
            continue
        wheels = [f for f in files if f[1] == "wheel" and f[2]]
        sdists = [f for f in files if f[1] == "sdist"]
        pick = (sdists or wheels) if want_sdist else (wheels or sdists)
        if not pick:
            continue
        entry, kind, _ = pick[0]
        return DistFile(name, str(version), entry["filename"], kind, entry["hashes"]["sha256"],
                        entry["url"], entry.get("upload-time", "")[:10])
    return None


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--library", required=True)
    parser.add_argument("--before", required=True, help="the breaking release's date, YYYY-MM-DD")
    parser.add_argument("--since", default="2019-01-01")
    parser.add_argument("names", nargs="+")
    args = parser.parse_args()
    for spec in args.names:
        name, _, flag = spec.partition(":")
        dist = choose(name, args.before, args.since, flag == "sdist")
        if dist is None:
            print(f"skipped {name}: no release between {args.since} and {args.before}", file=sys.stderr)
            continue
        print("[[project]]")
        print(f'library = "{args.library}"')
        print(f'name = "{dist.name}"')
        print(f'version = "{dist.version}"')
        print(f'kind = "{dist.kind}"')
        print(f'file = "{dist.filename}"')
        print(f'sha256 = "{dist.sha256}"')
        print(f'uploaded = "{dist.uploaded}"')
        print()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
