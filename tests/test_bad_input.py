"""Bad input: every problem is an InputError naming the file (and line and column where
there is one) or an unreadable entry naming line and column; never a traceback.
Also: finding documents, and proof that reading never writes to an input file."""

from __future__ import annotations

import json
import os
import pathlib

import pytest

from documents_support import structure, unreadable_lines
from stepcheck.documents import InputError, discover, read_path, read_text
from stepcheck.expressions.splitting import MAX_BLOCK_CHARS, structure_of


@pytest.fixture
def here(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch) -> pathlib.Path:
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _read(path: str):  # type: ignore[no-untyped-def]
    (found,) = discover([path])
    return read_path(*found)


# -- files --------------------------------------------------------------------------------


def test_missing_file(here: pathlib.Path) -> None:
    with pytest.raises(InputError) as caught:
        discover(["nowhere.tex"])
    assert str(caught.value) == "nowhere.tex: no such file or directory"


def test_directory_with_no_documents(here: pathlib.Path) -> None:
    (here / "empty").mkdir()
    (here / "empty" / "notes.txt").write_text("$a = b$", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        discover(["empty"])
    assert str(caught.value) == "empty: no documents (.tex, .md, .markdown, .ipynb) in this directory"


def test_file_of_unknown_kind(here: pathlib.Path) -> None:
    (here / "notes.txt").write_text("x", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        discover(["notes.txt"])
    assert "not a document stepcheck reads" in str(caught.value)


def test_not_utf8_names_line_and_column(here: pathlib.Path) -> None:
    (here / "heat.tex").write_bytes(b"first line\nsecond\nab\xc3\xa9cd\xff rest\n")
    with pytest.raises(InputError) as caught:
        _read("heat.tex")
    assert str(caught.value) == "heat.tex: not UTF-8 text: invalid byte 0xff at line 3, column 6"


def test_binary_file_names_the_nul_byte(here: pathlib.Path) -> None:
    (here / "blob.md").write_bytes(b"ab\ncd\x00ef")
    with pytest.raises(InputError) as caught:
        _read("blob.md")
    assert str(caught.value) == "blob.md: binary file, not text: a NUL byte at line 2, column 3"


def test_utf16_file_is_named_as_utf16(here: pathlib.Path) -> None:
    (here / "wide.tex").write_bytes("$a$".encode("utf-16"))
    with pytest.raises(InputError) as caught:
        _read("wide.tex")
    assert str(caught.value) == "wide.tex: UTF-16 text, not UTF-8; save the file as UTF-8 to check it"


def test_directory_named_like_a_document(here: pathlib.Path) -> None:
    (here / "odd.tex").mkdir()
    with pytest.raises(InputError) as caught:
        read_path(here / "odd.tex", "odd.tex", here)
    assert str(caught.value) == "odd.tex: is a directory, not a document"


def test_byte_order_mark_is_dropped(here: pathlib.Path) -> None:
    (here / "bom.tex").write_bytes("\ufeff\\[ a = b \\]\n".encode("utf-8"))
    document = _read("bom.tex")
    (block,) = document.blocks
    assert block.source.position(block.span.start).column == 1


def test_unknown_kind_for_text() -> None:
    with pytest.raises(InputError, match="unknown document kind 'rst'"):
        read_text("x", "rst")


# -- math that cannot be read ------------------------------------------------------------------

UNREADABLE = [
    ("unclosed-brace", "tex", "\\begin{align}\n  a &= \\frac{b}{c\n\\end{align}\n",
     "doc.tex:2:16 1: unclosed '{': no matching '}'"),
    ("stray-brace", "tex", "\\[ a = b} \\]\n", "doc.tex:1:9 1: unexpected '}' with no '{' to close"),
    ("unterminated-environment", "tex", "text\n\\begin{align}\n  a &= b\n\nmore text\n",
     "doc.tex:2:1 1: \\begin{align} is never closed: the end of the file came first"),
    ("environment-ended-by-another", "tex", "\\begin{align}\n a = b\n\\end{equation}\n",
     "doc.tex:1:1 1: \\begin{align} is never closed: \\end{equation} (line 3) came first"),
    ("stray-end", "tex", "a = b\n\\end{equation}\n", "doc.tex:2:1 1: \\end{equation} without a matching \\begin{equation}"),
    ("unterminated-double-dollar", "tex", "$$ a = b\n\nnext paragraph\n",
     "doc.tex:1:1 1: math opened by '$$' is never closed by '$$' (a blank line or the end of the file came first)"),
    ("unterminated-brackets", "tex", "\\[ a = b\n", "doc.tex:1:1 1: math opened by '\\[' is never closed by '\\]'"),
    ("unterminated-inline", "tex", "costs $a = b\n\nend\n", "doc.tex:1:7 1: math opened by '$' is never closed by '$'"),
    ("unclosed-inner-environment", "tex", "\\[ M = \\begin{pmatrix} 1 \\]\n", "doc.tex:1:8 1: \\begin{pmatrix} is never closed"),
    ("deep-braces", "tex", "\\[ a = " + "{" * 80 + "x" + "}" * 80 + " \\]\n", "doc.tex:1:68 1: braces nest deeper than 60 levels"),
    ("deep-environments", "tex", "\\[ a = " + "\\begin{bmatrix}" * 400 + "x" + "\\end{bmatrix}" * 400 + " \\]\n",
     "doc.tex:1:3 1: math nests too deeply to read"),
    ("self-doubling-macro", "tex",
     "\\newcommand{\\dbl}[1]{#1#1}\n\\newcommand{\\ten}{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{xy}}}}}}}}}}}\n"
     "\\newcommand{\\big}{\\dbl{\\dbl{\\dbl{\\dbl{\\dbl{\\ten}}}}}}\n\\[ a = \\big \\]\n",
     "doc.tex:4:8 1: macro expansion"),
    ("markdown-unclosed-brace", "md", "$$\na = \\frac{1}{2\n$$\n", "doc.md:2:13 1: unclosed '{': no matching '}'"),
    ("block-quote-unclosed-brace", "md", "> $$\n> a = {b\n> $$\n", "doc.md:2:7 1: unclosed '{': no matching '}'"),
]


@pytest.mark.parametrize("kind, text, expected", [c[1:] for c in UNREADABLE], ids=[c[0] for c in UNREADABLE])
def test_unreadable_math_is_a_located_parse_error(kind: str, text: str, expected: str) -> None:
    s = structure(text, kind)
    lines = unreadable_lines(s)
    assert len(lines) == 1 and lines[0].startswith(expected), lines
    assert s.chains == ()


def test_reading_goes_on_after_an_unterminated_display() -> None:
    s = structure("\\begin{equation}\n a = b\n\n\\begin{align}\n c &= d\n\\end{align}\n")
    assert [u.chain for u in s.unreadable] == [1]
    assert [(c.number, c.source.position(c.sides[1].span.start).line) for c in s.chains] == [(2, 5)]


def test_megabyte_prose_line_does_not_hang() -> None:
    line = "the heat exchanger fouls slowly " * 31_250
    s = structure(line + " where $q = h A$ and \\[ Q = m c \\]\n")
    assert len(line) == 1_000_000
    assert len(s.chains) == 1 and len(s.inline_chains) == 1


def test_megabyte_math_line_is_a_parse_error_not_a_wait() -> None:
    s = structure("\\[ s = " + "a + " * 250_000 + "b \\]\n")
    (line,) = unreadable_lines(s)
    assert line == f"doc.tex:1:3 1: this math is 1000007 characters long; the most read in one block is {MAX_BLOCK_CHARS}"


def test_megabyte_markdown_line_does_not_hang() -> None:
    s = structure("the delivery route model " * 40_000 + "$$a = b$$\n", "md")
    assert len(s.chains) == 1


# -- finding documents ----------------------------------------------------------------------


def test_directories_recurse_in_sorted_order_and_skip_hidden(here: pathlib.Path) -> None:
    for name in ["b.md", "a.tex", "sub/c.ipynb", "sub/deep/d.markdown", ".hidden/e.tex", "sub/.f.tex", "g.txt"]:
        path = here / "docs" / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text("x", encoding="utf-8")
    found = discover(["docs"])
    assert [d for _, d, _ in found] == [
        os.path.join("docs", "a.tex"), os.path.join("docs", "b.md"),
        os.path.join("docs", "sub", "c.ipynb"), os.path.join("docs", "sub", "deep", "d.markdown"),
    ]
    assert all(root == pathlib.Path("docs") for _, _, root in found)


def test_include_and_exclude_filter_a_walk(here: pathlib.Path) -> None:
    for name in ["a.tex", "b.md", "drafts/c.tex"]:
        path = here / "docs" / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text("x", encoding="utf-8")
    assert [d for _, d, _ in discover(["docs"], include=["*.tex"])] == ["docs/a.tex", "docs/drafts/c.tex"]
    # a pattern with a '/' is anchored at the working folder (git practice); one without
    # matches a name at any depth, a folder's name included
    assert [d for _, d, _ in discover(["docs"], exclude=["docs/drafts/*"])] == ["docs/a.tex", "docs/b.md"]
    assert [d for _, d, _ in discover(["docs"], exclude=["drafts/*"])] == ["docs/a.tex", "docs/b.md", "docs/drafts/c.tex"]
    assert [d for _, d, _ in discover(["docs"], exclude=["drafts"])] == ["docs/a.tex", "docs/b.md"]
    with pytest.raises(InputError, match="after the include/exclude patterns"):
        discover(["docs"], include=["*.ipynb"])


def test_a_file_given_twice_is_read_once(here: pathlib.Path) -> None:
    (here / "a.tex").write_text("x", encoding="utf-8")
    found = discover(["a.tex", "./a.tex", "."])
    assert [d for _, d, _ in found] == ["a.tex"]


# -- never writing ------------------------------------------------------------------------------


def test_reading_never_writes_input_files(here: pathlib.Path) -> None:
    files = {
        "main.tex": "\\newcommand{\\R}{\\mathbb{R}}\n\\input{part}\n% stepcheck: skip\n\\[ a = b \\]\n",
        "part.tex": "\\begin{align}\n x &= y \\\\\n   &= z\n\\end{align}\n",
        "notes.md": "<!-- stepcheck: off -->\n$$ c = d $$\n",
        "cells.ipynb": json.dumps({"cells": [{"cell_type": "markdown", "source": ["$$ e = f $$\n"]}]}),
        "broken.tex": "\\begin{align} a = {b\n",
    }
    for name, text in files.items():
        (here / name).write_text(text, encoding="utf-8")
        os.utime(here / name, ns=(1_000_000_000, 1_000_000_000))
    before = {name: ((here / name).read_bytes(), (here / name).stat().st_mtime_ns) for name in files}
    for path, display, root in discover(["."]):
        structure_of(read_path(path, display, root))
    after = {name: ((here / name).read_bytes(), (here / name).stat().st_mtime_ns) for name in files}
    assert after == before
    assert sorted(p.name for p in here.iterdir()) == sorted(files)


# -- no input crashes the readers -------------------------------------------------------------

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_FRAGMENTS = st.sampled_from(
    ["$", "$$", "\\[", "\\]", "\\(", "\\)", "{", "}", "\\begin{align}", "\\end{align}", "\\begin{equation}",
     "\\end{pmatrix}", "\\begin{verbatim}", "\\verb|", "%", "% stepcheck: skip", "% stepcheck: layout x",
     "<!-- stepcheck: off -->", "<!--", "-->", "\\newcommand{\\a}[1]{#1#1}", "\\a", "\\def\\b{", "\\input{x}",
     "\\iffalse", "\\fi", "&", "\\\\", "=", "a", "x_i", "\\frac{", "\\left(", "\\right)", "\n", "\n\n", "> ",
     "```", "```math\n", "    ", "- ", "\\overset{", "\r\n", "\t", "é", "\\", "#1", "[", "]"]
)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(_FRAGMENTS, max_size=25), st.sampled_from(["tex", "md"]))
def test_no_text_makes_a_reader_raise(fragments: list[str], kind: str) -> None:
    text = "".join(fragments)
    document = read_text(text, kind, "fuzz")
    s = structure_of(document)
    for chain in s.chains:
        assert len(chain.sides) == len(chain.relations) + 1
    for entry in s.unreadable:
        assert entry.message and entry.chain >= 1


# -- many unclosed openers: each search for a closer is done once, not once per opener -------------
# (sizes chosen so that a search per opener would take minutes; no timing is asserted)

MANY_UNCLOSED = [
    ("tex-brackets", "tex", "\\[ " * 5000, 5000),
    ("tex-parens", "tex", "\\( " * 5000, 5000),
    ("tex-math-environment", "tex", "\\begin{math} " * 5000, 5000),
    ("tex-definitions", "tex", "\\newcommand{\\x}{" * 5000, 0),
    ("tex-iffalse", "tex", "\\iffalse " * 5000 + "$a$", 0),
    ("tex-verb", "tex", "\\verb+a " * 5000, 0),
    ("md-dollar-lines-in-quote", "md", "> $$ a\n" * 5000, 0),
    ("md-align-lines", "md", "\\begin{align}\n" * 5000, 1),
    ("md-comment-openers", "md", "<!-- " * 5000, 0),
]


@pytest.mark.parametrize("kind, text, problems", [c[1:] for c in MANY_UNCLOSED], ids=[c[0] for c in MANY_UNCLOSED])
def test_many_unclosed_openers_read_in_one_pass(kind: str, text: str, problems: int) -> None:
    document = read_text(text, kind, "many")
    assert len(document.problems) == problems
    structure_of(document)


def test_a_later_block_is_read_after_an_unclosed_dollar_block() -> None:
    s = structure("$$ a\ntext\n\n$$\nb = c\n$$\n", "md")
    assert [c.source.position(c.sides[1].span.start).line for c in s.chains] == [5]
