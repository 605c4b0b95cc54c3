"""setup.cfg `[options]`: install_requires, extras_require, python_requires."""

from __future__ import annotations

import configparser

from impactscope.exposure.reader import Reader, decode_text
from impactscope.exposure.requirements import COMMENT, read_included


def read_setup_cfg(path: str, reader: Reader) -> None:
    text = decode_text(path, reader.files[path], reader)
    if text is None:
        return
    parser = configparser.ConfigParser(interpolation=None, strict=False)
    try:
        parser.read_string(text, source=path)
    except configparser.Error as exc:
        reader.problem(f"{path}: invalid setup.cfg ({' '.join(str(exc).split())}); not read")
        return
    for option in ("python_requires", "python-requires"):
        if parser.has_option("options", option):
            reader.add_python(parser.get("options", option).strip(), f"{path} [options.{option}]")
    entries = []
    for option in ("install_requires", "install-requires"):  # setuptools still takes the dashed spelling
        if parser.has_option("options", option):
            entries.append((f"options.{option}", parser.get("options", option)))
    if parser.has_section("options.extras_require"):
        for extra, value in parser.items("options.extras_require"):
            entries.append((f"options.extras_require.{extra}", value))
    for table, value in entries:
        source = f"{path} [{table}]"
        value = value.strip()
        if value.startswith("file:"):
            for target in value[len("file:"):].split(","):
                read_included(path, source, target.strip(), reader, constraint=False, prereleases=False)
            continue
        # setuptools reads a multi-line value line by line (a dangling list) and a one-line value
        # as `;`-separated, which is why a marker only works in the dangling form.
        items = value.splitlines() if "\n" in value else value.split(";")
        for item in items:
            item = COMMENT.sub("", item).strip()
            if item:
                reader.add_requirement(item, source)
