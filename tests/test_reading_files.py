"""Reading files from disk: line ends, other encodings named, special files never waited on,
every file a run reads is recorded, and include/exclude patterns (git practice for ``**``).

Scenarios are invented (a pump network, a bridge cable, a heat exchanger).
"""

from __future__ import annotations

import contextlib
import os
import pathlib
import signal
import socket
from typing import Iterator

import pytest
from robustness_helpers import put

from stepcheck.documents import InputError, discover, read_path, read_text
from stepcheck.documents.files import decode, read_bytes, recording_reads
from stepcheck.documents.patterns import anchor, any_match, PathPattern, translate
from stepcheck.expressions.splitting import structure_of


@pytest.fixture
def here(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch) -> pathlib.Path:
    monkeypatch.chdir(tmp_path)
    return tmp_path




@contextlib.contextmanager
def never_waits(seconds: int = 5) -> Iterator[None]:
    """Fail instead of hanging when the block blocks (opening a named pipe waits for a writer)."""

    def give_up(signum, frame):  # type: ignore[no-untyped-def]
        raise AssertionError("blocked on a special file")

    previous = signal.signal(signal.SIGALRM, give_up)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def step_lines(document) -> list[tuple[int, int]]:  # type: ignore[no-untyped-def]
    """(line, column) where each chain's second side starts."""
    chains = structure_of(document).chains
    return [c.source.position(c.sides[1].span.start) for c in chains]


# --- line ends --------------------------------------------------------------------------------

LINE_ENDS = [
    pytest.param(b"a\rb", "a\nb", id="lone-cr"),
    pytest.param(b"a\r\nb", "a\r\nb", id="crlf-kept"),
    pytest.param(b"a\r\r\nb\r", "a\n\r\nb\n", id="cr-then-crlf"),
    pytest.param(b"\r\r", "\n\n", id="only-cr"),
    pytest.param(b"a\nb", "a\nb", id="lf"),
]


@pytest.mark.parametrize("data, text", LINE_ENDS)
def test_a_lone_carriage_return_ends_a_line_one_character_for_one(data, text):
    decoded = decode(data, "pump.tex")
    assert decoded == text and len(decoded) == len(data.decode("utf-8"))


@pytest.mark.parametrize("kind, text", [
    ("tex", "% pump\r\\[ a + b = b + a \\]\r\r\\[ (c+d)^2 = c^2 + d^2 \\]\r"),
    ("md", "Pump.\r\r$$ a + b = b + a $$\r\r$$ (c+d)^2 = c^2 + d^2 $$\r"),
], ids=["tex", "md"])
def test_cr_only_file_steps_stand_on_their_lines(here, kind, text):
    """Hand-counted: the right sides start at 2:12 / 4:14 (tex) and 3:12 / 5:14 (md)."""
    path = put(here, f"pump.{kind}", text.encode("utf-8"))
    ((found, display, root),) = discover([path.name])
    lines = [(p.line, p.column) for p in step_lines(read_path(found, display, root))]
    assert lines == ([(2, 12), (4, 14)] if kind == "tex" else [(3, 12), (5, 14)])
    assert [(p.line, p.column) for p in step_lines(read_text(text, kind))] == lines


def test_an_input_file_with_cr_line_ends_is_read_by_lines(here):
    put(here, "paper/part.tex", b"% cable part\r\\[ (c+d)^2 = c^2 + d^2 \\]\r")
    put(here, "paper/main.tex", "\\input{part}\n")
    ((found, display, root),) = discover(["paper/main.tex"])
    (side,) = step_lines(read_path(found, display, root))
    assert (side.line, side.column) == (2, 14)


def test_a_bad_byte_after_cr_line_ends_is_located_by_those_lines(here):
    put(here, "cable.tex", b"one\rtwo\r\nab\xff\r")
    with pytest.raises(InputError) as caught:
        read_path(here / "cable.tex", "cable.tex", here)
    assert str(caught.value) == "cable.tex: not UTF-8 text: invalid byte 0xff at line 3, column 3"


# --- other encodings are named ------------------------------------------------------------------

WIDE = [
    pytest.param("x \\[ a = a \\]\n".encode("utf-16"), "UTF-16", id="utf16-bom"),
    pytest.param(b"\xfe\xff" + "x \\[ a = a \\]\n".encode("utf-16-be"), "UTF-16", id="utf16-be-bom"),
    pytest.param("x \\[ a = a \\]\n".encode("utf-16-le"), "UTF-16", id="utf16-le-no-bom"),
    pytest.param("x \\[ a = a \\]\n".encode("utf-16-be"), "UTF-16", id="utf16-be-no-bom"),
    pytest.param("x \\[ a = a \\]\n".encode("utf-32"), "UTF-32", id="utf32-bom"),
]


@pytest.mark.parametrize("data, name", WIDE)
def test_wide_encodings_are_named(data, name):
    with pytest.raises(InputError) as caught:
        decode(data, "wide.tex")
    assert str(caught.value) == f"wide.tex: {name} text, not UTF-8; save the file as UTF-8 to check it"


def test_a_binary_file_is_still_binary():
    with pytest.raises(InputError, match="binary file, not text: a NUL byte at line 1, column 1"):
        decode(bytes(range(256)) * 4, "blob.tex")


# --- named pipes, sockets, devices ---------------------------------------------------------------

needs_fifo = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")


@needs_fifo
def test_a_named_pipe_given_directly_is_refused(here):
    os.mkfifo(here / "pipe.tex")
    with never_waits(), pytest.raises(InputError) as caught:
        discover(["pipe.tex"])
    assert str(caught.value) == "pipe.tex: a named pipe, not a regular file; not read"


@needs_fifo
def test_a_named_pipe_in_a_folder_is_a_note_and_never_opened(here):
    put(here, "notes/cable.tex", "\\[ a + b = b + a \\]\n")
    os.mkfifo(here / "notes" / "pipe.tex")
    with never_waits():
        found = discover(["notes"])
        documents = [read_path(*f) for f in found]
    assert [d.path for d in documents] == ["notes/cable.tex", "notes/pipe.tex"]
    (note,) = documents[1].notes
    assert note.message == "a named pipe, not a regular file; skipped (never opened)" and documents[1].blocks == ()


@needs_fifo
def test_reading_a_named_pipe_directly_never_waits(here):
    os.mkfifo(here / "pipe.md")
    with never_waits(), pytest.raises(InputError, match="pipe.md: a named pipe, not a regular file"):
        read_bytes(here / "pipe.md", "pipe.md")


@pytest.mark.skipif(not hasattr(socket, "AF_UNIX"), reason="needs Unix sockets")
def test_a_socket_in_a_folder_is_a_note(here):
    put(here, "notes/cable.tex", "\\[ a = a \\]\n")
    with socket.socket(socket.AF_UNIX) as server:
        server.bind(str(here / "notes" / "sock.md"))
        documents = [read_path(*f) for f in discover(["notes"])]
    assert [n.message for n in documents[1].notes] == ["a socket, not a regular file; skipped (never opened)"]


@pytest.mark.skipif(not os.path.exists("/dev/null"), reason="needs /dev/null")
def test_a_device_behind_a_link_is_refused(here):
    (here / "null.tex").symlink_to("/dev/null")
    with pytest.raises(InputError, match="null.tex: a character device, not a regular file; not read"):
        discover(["null.tex"])


# --- every file a run reads is recorded ------------------------------------------------------------


def test_recording_reads_lists_documents_and_input_files_of_macros_only(here):
    put(here, "paper/macros.tex", "\\newcommand{\\grad}{\\nabla}\n")
    put(here, "paper/main.tex", "\\input{macros}\n\\[ (c+d)^2 = c^2 + d^2 \\]\n")
    with recording_reads() as read:
        for found in discover(["paper/main.tex"]):
            read_path(*found)
    identities = {(r.device, r.inode) for r in read}
    for name in ("paper/main.tex", "paper/macros.tex"):
        info = os.stat(name)
        assert (info.st_dev, info.st_ino) in identities
    assert read_bytes(here / "paper/main.tex", "x") and len(read) == 2  # outside the block: not recorded


# --- include / exclude patterns ----------------------------------------------------------------------

PATTERNS = [
    # (pattern relative to /r, path, matches?) — git and pathlib.glob practice
    ("docs/**/*.tex", "/r/docs/top.tex", True),          # **/ is zero folders
    ("docs/**/*.tex", "/r/docs/a/b/low.tex", True),      # … or several
    ("docs/**/*.tex", "/r/other/docs/x.tex", False),     # anchored at the base
    ("docs/*.tex", "/r/docs/a/low.tex", False),          # * does not cross /
    ("*.md", "/r/a/b/c.md", True),                       # no slash: a name at any depth
    ("drafts", "/r/docs/drafts/x.tex", True),            # a folder's name drops what is under it
    ("docs/drafts/", "/r/docs/drafts/x.tex", True),
    ("/notes", "/r/notes/x.tex", True),                  # a leading / anchors, as in git
    ("/notes", "/r/sub/notes/x.tex", False),
    ("./docs/*.tex", "/r/docs/a.tex", True),
    ("note?.tex", "/r/note1.tex", True),
    ("note?.tex", "/r/note12.tex", False),
    ("[!d]*.tex", "/r/pump.tex", True),
    ("[!d]*.tex", "/r/drum.tex", False),
    ("[a-c]*.md", "/r/b.md", True),
    ("docs/**", "/r/docs/a/b.tex", True),
    ("x[", "/r/x[", True),                               # an unclosed [ is itself
]


@pytest.mark.parametrize("pattern, path, expected", PATTERNS, ids=[f"{p}~{q}" for p, q, _ in PATTERNS])
def test_pattern_rules(pattern, path, expected, monkeypatch):
    monkeypatch.setattr(os.path, "realpath", lambda p: p)  # /r is not a real folder
    compiled = PathPattern.compile(anchor(pattern, "/r"), "/")  # as the command line anchors them
    assert any_match([compiled], path) is expected


def test_a_base_folder_with_glob_characters_is_taken_literally(tmp_path):
    base = tmp_path / "run [1] *"
    put(base, "docs/a.tex", "x")
    put(tmp_path / "run 1 x", "docs/a.tex", "x")
    pattern = PathPattern.compile("docs/*.tex", base)
    assert any_match([pattern], base / "docs" / "a.tex")
    assert not any_match([pattern], tmp_path / "run 1 x" / "docs" / "a.tex")


def test_anchor_and_translate():
    assert anchor("docs/**/*.tex", "/") == "/docs/**/*.tex"
    assert translate("/r/docs/**/*.tex") == r"/r/docs/(?:[^/]+/)*[^/]*\.tex"


def test_an_absolute_pattern_given_to_discover_is_absolute(here):
    put(here, "notes/a.tex", "x")
    put(here, "notes/b.tex", "x")
    assert [d for _, d, _ in discover(["notes"], include=[f"{here}/notes/a.*"])] == ["notes/a.tex"]


def test_patterns_relative_to_a_configuration_folder_work_from_a_subfolder(here, monkeypatch):
    put(here, "docs/top.tex", "x")
    put(here, "docs/deep/low.tex", "x")
    put(here, "docs/drafts/old.tex", "x")
    include = (anchor("docs/**/*.tex", here),)
    exclude = (anchor("docs/drafts", here),)
    monkeypatch.chdir(here / "docs")
    assert [d for _, d, _ in discover(["."], include, exclude)] == ["deep/low.tex", "top.tex"]
