"""Files from PyPI, fetched as data: never built, installed, imported or run.

Wheels come through `pip download --only-binary=:all: --no-deps` (pip never runs code for a
wheel); sdists come straight from the PEP 691 JSON simple API, because `pip download` of an
sdist runs its build backend. Every file is checked against the sha256 pinned in corpus.toml.
"""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
import urllib.request
from dataclasses import dataclass
from pathlib import Path

SIMPLE = "https://pypi.org/simple/{name}/"
# PEP 691: the JSON form of the simple repository API.
JSON_ACCEPT = "application/vnd.pypi.simple.v1+json"


class FetchError(ValueError):
    """A file could not be had, or was not the file that was pinned."""


@dataclass(frozen=True)
class DistFile:
    name: str  # project name as listed in corpus.toml
    version: str
    filename: str
    kind: str  # "wheel" | "sdist"
    sha256: str
    url: str = ""
    uploaded: str = ""


def simple_files(name: str) -> list[dict]:
    """The file entries of a project in the PEP 691 JSON simple API."""
    request = urllib.request.Request(SIMPLE.format(name=name), headers={"Accept": JSON_ACCEPT})
    with urllib.request.urlopen(request, timeout=60) as response:
        return json.load(response)["files"]


def sha256_of(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _check(path: Path, dist: DistFile) -> Path:
    got = sha256_of(path)
    if got != dist.sha256:
        path.unlink()
        raise FetchError(
            f"{dist.filename}: sha256 {got} does not match the pinned {dist.sha256}; "
            "the file was removed; re-pin corpus.toml only if the registry really changed it"
        )
    return path


def fetch(dist: DistFile, folder: Path, *, platform: str | None = None) -> Path:
    """Download `dist` into `folder` (kept if already there and the hash matches)."""
    folder.mkdir(parents=True, exist_ok=True)
    target = folder / dist.filename
    if target.exists() and sha256_of(target) == dist.sha256:
        return target
    if dist.kind == "wheel":
        command = [
            sys.executable, "-m", "pip", "download", "--quiet", "--disable-pip-version-check",
            "--only-binary=:all:", "--no-deps", "--ignore-requires-python", "--dest", str(folder), f"{dist.name}=={dist.version}",
        ]
        # --ignore-requires-python: the file is read as text, never installed, so an old
        # release that excludes this interpreter is still the file we pinned.
        if platform:
            # A platform wheel of the library itself: name the tags so pip picks the pinned file.
            command += ["--platform", platform, "--python-version", "3.11", "--implementation", "cp"]
        done = subprocess.run(command, capture_output=True, text=True, timeout=600)
        if done.returncode != 0 or not target.exists():
            raise FetchError(
                f"{dist.filename}: pip download did not produce it ({done.stderr.strip()[-300:]}); "
                "check the pinned version and file name in corpus.toml"
            )
        return _check(target, dist)
    entries = {entry["filename"]: entry for entry in simple_files(dist.name)}
    entry = entries.get(dist.filename)
    if entry is None:
        raise FetchError(f"{dist.filename}: not listed by the simple API for {dist.name}")
    if entry["hashes"].get("sha256") != dist.sha256:
        raise FetchError(f"{dist.filename}: the index lists another sha256 than corpus.toml pins")
    with urllib.request.urlopen(entry["url"], timeout=120) as response:
        target.write_bytes(response.read())
    return _check(target, dist)
