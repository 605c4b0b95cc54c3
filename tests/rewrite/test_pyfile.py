"""Files read and written back in their own encoding (PEP 263) and with their BOM."""

from __future__ import annotations

import codecs
from pathlib import Path

from impactscope.rewrite.pyfile import PyFile
from tests.rewrite.helpers import rewritten


def test_round_trip_keeps_bytes() -> None:
    for data in (
        codecs.BOM_UTF8 + b"x = 1\r\n",
        "# -*- coding: latin-1 -*-\nname = 'caf\u00e9'\n".encode("latin-1"),
        b"no final newline",
    ):
        file = PyFile.read(data)
        assert file.encode(file.lines.text) == data


def test_a_latin1_file_with_crlf_and_no_final_newline_is_rewritten_in_place(tmp_path: Path) -> None:
    # PEP 263: the coding comment on line 1 names the encoding the file is read and written in.
    before = (
        "# -*- coding: latin-1 -*-\r\nimport heronframe as hf\r\n# caf\u00e9\r\n"
        "t = hf.Table()\r\nu = t.stack_rows(t)"
    ).encode("latin-1")
    after = before.replace(b"stack_rows", b"append_rows")
    assert rewritten(tmp_path, {"m.py": before}) == {"m.py": after}


def test_a_bom_stays(tmp_path: Path) -> None:
    before = codecs.BOM_UTF8 + b"import heronframe as hf\nt = hf.Table()\nt.stack_rows(t)\n"
    assert rewritten(tmp_path, {"m.py": before}) == {"m.py": before.replace(b"stack_rows", b"append_rows")}
