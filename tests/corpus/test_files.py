from __future__ import annotations

import os
import socket
from pathlib import Path

import pytest

from impactscope.corpus.files import FileRefused, read_regular, refusal
from impactscope.reasons import Reason

pytestmark = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs and symlinks")


@pytest.fixture
def folder(tmp_path: Path) -> tuple[Path, Path]:
    """A library-source-like folder with every kind of file in it, and a file outside it."""
    outside = tmp_path / "secret.py"
    outside.write_text("token = 1\n")
    inside = tmp_path / "lib"
    (inside / "pkg").mkdir(parents=True)
    (inside / "pkg" / "mod.py").write_text("x = 1\n")
    os.mkfifo(inside / "pkg" / "pipe.py")
    (inside / "pkg" / "out.py").symlink_to(outside)
    (inside / "pkg" / "alias.py").symlink_to(inside / "pkg" / "mod.py")
    (inside / "pkg" / "loop.py").symlink_to(inside / "pkg" / "loop.py")
    (inside / "pkg" / "to_pipe.py").symlink_to(inside / "pkg" / "pipe.py")
    (inside / "outdir").symlink_to(tmp_path)
    return inside, outside


def test_refusal_of_each_kind(folder: tuple[Path, Path]) -> None:
    inside, _ = folder
    boundary = os.path.realpath(inside)
    reasons = {name: refusal(str(inside / "pkg" / name), boundary)
               for name in ("mod.py", "pipe.py", "out.py", "alias.py", "loop.py", "to_pipe.py")}
    assert reasons == {"mod.py": None, "pipe.py": Reason.SPECIAL_FILE, "out.py": "link outside the corpus",
                       "alias.py": None, "loop.py": Reason.BROKEN_LINK, "to_pipe.py": Reason.SPECIAL_FILE}
    assert refusal(str(inside / "pkg"), boundary) is None
    assert refusal(str(inside / "outdir"), boundary, outside="link outside the library source") == (
        "link outside the library source")


def test_a_socket_is_a_special_file(tmp_path: Path) -> None:
    path = tmp_path / "s.py"
    with socket.socket(socket.AF_UNIX) as server:
        server.bind(str(path))
        assert refusal(str(path), os.path.realpath(tmp_path)) == Reason.SPECIAL_FILE
        with pytest.raises(OSError):  # a socket cannot even be opened as a file
            read_regular(str(path), 100)


def test_read_regular_never_blocks_on_a_fifo(folder: tuple[Path, Path]) -> None:
    inside, _ = folder
    # Without O_NONBLOCK this open would wait for a writer forever.
    with pytest.raises(FileRefused) as caught:
        read_regular(str(inside / "pkg" / "pipe.py"), 100)
    assert caught.value.reason == Reason.SPECIAL_FILE
    with pytest.raises(FileRefused, match=Reason.SPECIAL_FILE):
        read_regular(str(inside / "pkg" / "to_pipe.py"), 100, boundary=os.path.realpath(inside))


def test_read_regular_follows_links_only_inside_the_boundary(folder: tuple[Path, Path]) -> None:
    inside, _ = folder
    boundary = os.path.realpath(inside)
    assert read_regular(str(inside / "pkg" / "alias.py"), 100, boundary=boundary) == b"x = 1\n"
    with pytest.raises(FileRefused) as caught:
        read_regular(str(inside / "pkg" / "out.py"), 100, boundary=boundary)
    assert caught.value.reason == "link outside the corpus"
    with pytest.raises(OSError):  # no boundary: a link at the last step is not followed at all
        read_regular(str(inside / "pkg" / "alias.py"), 100)


def test_read_regular_is_bounded(folder: tuple[Path, Path]) -> None:
    inside, _ = folder
    path = str(inside / "pkg" / "mod.py")
    assert read_regular(path, 6) == b"x = 1\n"
    with pytest.raises(FileRefused) as caught:
        read_regular(path, 5, reason="too large")
    assert caught.value.reason == "too large"
