"""The LaTeX reader: blocks, directives, macro definitions, verbatim and ``\\input``."""

from __future__ import annotations

import os
import pathlib

import pytest

from documents_support import document_steps, step_lines, structure
from stepcheck.documents import discover, read_path, read_text
from stepcheck.documents.model import BlockKind


def _blocks(text: str) -> list[tuple[str, str, str]]:
    document = read_text(text, "tex", "t.tex")
    return [(b.kind.value, b.environment, b.excerpt.text) for b in document.blocks]


BLOCK_CASES = [
    ("equation", "\\begin{equation} a = b \\end{equation}", [("display", "equation", " a = b ")]),
    ("align-star", "\\begin{align*}x&=y\\end{align*}", [("display", "align*", "x&=y")]),
    ("gather", "\\begin{gather}p\\end{gather}", [("display", "gather", "p")]),
    ("multline-star", "\\begin{multline*}p\\end{multline*}", [("display", "multline*", "p")]),
    ("eqnarray", "\\begin{eqnarray}p\\end{eqnarray}", [("display", "eqnarray", "p")]),
    ("flalign", "\\begin{flalign}p\\end{flalign}", [("display", "flalign", "p")]),
    ("alignat-argument-skipped", "\\begin{alignat}{2} p &= q \\end{alignat}", [("display", "alignat", " p &= q ")]),
    ("brackets", "\\[ u \\]", [("display", "\\[", " u ")]),
    ("double-dollar", "$$ v $$", [("display", "$$", " v ")]),
    ("inline-dollar", "a $w$ b", [("inline", "$", "w")]),
    ("inline-parens", "a \\(w\\) b", [("inline", "\\(", "w")]),
    ("math-environment", "\\begin{math}w\\end{math}", [("inline", "math", "w")]),
    ("escaped-dollar-is-text", "costs \\$5 and \\$6", []),
    ("dollar-in-comment-is-text", "% a $ b\n$c$", [("inline", "$", "c")]),
    ("aligned-stays-inside", "\\[\\begin{aligned} a&=b\\end{aligned}\\]", [("display", "\\[", "\\begin{aligned} a&=b\\end{aligned}")]),
    ("end-in-comment-does-not-close", "\\begin{align}a % \\end{align}\n=b\\end{align}", [("display", "align", "a % \\end{align}\n=b")]),
    ("text-dollars-inside-display", "$$ a \\text{ for $x$} $$", [("display", "$$", " a \\text{ for $x$} ")]),
    ("verbatim-blanked", "\\begin{verbatim}$x$ \\begin{align}\\end{verbatim}$y$", [("inline", "$", "y")]),
    ("lstlisting-blanked", "\\begin{lstlisting}cost = $5\\end{lstlisting}\\(z\\)", [("inline", "\\(", "z")]),
    ("minted-blanked", "\\begin{minted}{python}a = '$$'\\end{minted}$q$", [("inline", "$", "q")]),
    ("comment-env-blanked", "\\begin{comment}\\[ a = b \\]\\end{comment}$r$", [("inline", "$", "r")]),
    ("verb-blanked", "\\verb|$x$| and \\verb*+\\[+ then $s$", [("inline", "$", "s")]),
    ("iffalse-hidden", "\\iffalse \\[ a = b \\] \\fi $c$", [("inline", "$", "c")]),
    ("iffalse-nested", "\\iffalse \\ifx a b $x$ \\fi $y$ \\fi $c$", [("inline", "$", "c")]),
    ("iffalse-with-iff-inside", "\\iffalse $a \\iff b$ \\fi $c$", [("inline", "$", "c")]),
    ("iffalse-never-closed-hides-nothing", "\\iffalse $e$", [("inline", "$", "e")]),
    ("nothing-after-end-document", "$a$ \\end{document} $b$", [("inline", "$", "a")]),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in BLOCK_CASES], ids=[c[0] for c in BLOCK_CASES])
def test_blocks_found(text: str, expected: list[tuple[str, str, str]]) -> None:
    assert _blocks(text) == expected


def test_block_spans_and_excerpt_offsets_are_file_offsets() -> None:
    text = "Intro $x$.\n\\begin{align}\n  a &= b\n\\end{align}\n"
    document = read_text(text, "tex", "t.tex")
    inline, display = document.blocks
    assert text[inline.span.start : inline.span.end] == "$x$"
    assert text[display.span.start : display.span.end] == "\\begin{align}\n  a &= b\n\\end{align}"
    assert display.excerpt.to_file(0) == text.index("\n  a")
    assert [inline.order, display.order] == [0, 1]


def test_verbatim_keeps_positions_after_it() -> None:
    text = "\\begin{verbatim}\n$$ not = math $$\n\\end{verbatim}\n\\[ p = q \\]\n"
    assert step_lines(structure(text)) == ["doc.tex:4:8 1.1 p = q"]


def test_crlf_lines_keep_columns() -> None:
    text = "\\begin{align}\r\n  a &= b \\\\\r\n    &= c\r\n\\end{align}\r\n"
    assert step_lines(structure(text)) == ["doc.tex:2:8 1.1 a = b", "doc.tex:3:8 1.2 b = c"]


def test_tab_is_one_column() -> None:
    assert step_lines(structure("\\[\ta =\tb \\]")) == ["doc.tex:1:8 1.1 a = b"]


def test_unicode_columns_count_characters() -> None:
    assert step_lines(structure("é—ö \\[ a = b \\]")) == ["doc.tex:1:12 1.1 a = b"]


DIRECTIVE_CASES = [
    ("own-line", "% stepcheck: skip\n", [("skip", False)]),
    ("leading-space", "   %   stepcheck:   layout denominator  \n", [("layout denominator", False)]),
    ("not-at-start", "% note: stepcheck: skip\n", []),
    ("escaped-percent", "50\\% stepcheck: skip\n", []),
    ("row-end-inside-display", "\\begin{align}\n a &= b \\\\ % stepcheck: skip\n &= c\n\\end{align}\n", [("skip", True)]),
    ("crlf-trimmed", "% stepcheck: off\r\n", [("off", False)]),
    ("inside-verbatim-ignored", "\\begin{verbatim}\n% stepcheck: off\n\\end{verbatim}\n", []),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in DIRECTIVE_CASES], ids=[c[0] for c in DIRECTIVE_CASES])
def test_directive_comments(text: str, expected: list[tuple[str, bool]]) -> None:
    document = read_text(text, "tex", "t.tex")
    assert [(d.body, d.at_row_end) for d in document.directives] == expected
    for d in document.directives:
        assert text[d.span.start : d.span.end] == d.body


MACRO_CASES = [
    ("newcommand-braced", "\\newcommand{\\R}{\\mathbb{R}}", ("\\R", 0, None, "\\mathbb{R}", False, False)),
    ("newcommand-bare-name", "\\newcommand\\R{\\mathbb{R}}", ("\\R", 0, None, "\\mathbb{R}", False, False)),
    ("starred", "\\newcommand*{\\x}{y}", ("\\x", 0, None, "y", False, False)),
    ("arguments", "\\newcommand{\\pd}[2]{\\frac{\\partial #1}{\\partial #2}}", ("\\pd", 2, None, "\\frac{\\partial #1}{\\partial #2}", False, False)),
    ("default", "\\newcommand{\\vect}[2][x]{#1_{#2}}", ("\\vect", 2, "x", "#1_{#2}", False, False)),
    ("spaces-between", "\\newcommand {\\v} [1] {\\mathbf{#1}}", ("\\v", 1, None, "\\mathbf{#1}", False, False)),
    ("renewcommand", "\\renewcommand{\\vec}[1]{\\mathbf{#1}}", ("\\vec", 1, None, "\\mathbf{#1}", False, False)),
    ("providecommand", "\\providecommand{\\T}{\\top}", ("\\T", 0, None, "\\top", False, True)),
    ("operator", "\\DeclareMathOperator{\\tr}{tr}", ("\\tr", 0, None, "\\operatorname{tr}", True, False)),
    ("operator-starred", "\\DeclareMathOperator*{\\argmin}{arg\\,min}", ("\\argmin", 0, None, "\\operatorname*{arg\\,min}", True, False)),
    ("def", "\\def\\half{\\frac12}", ("\\half", 0, None, "\\frac12", False, False)),
    ("def-parameters", "\\def\\pair#1#2{(#1,#2)}", ("\\pair", 2, None, "(#1,#2)", False, False)),
    ("body-with-escaped-brace", "\\newcommand{\\set}[1]{\\{#1\\}}", ("\\set", 1, None, "\\{#1\\}", False, False)),
]


@pytest.mark.parametrize("text, expected", [c[1:] for c in MACRO_CASES], ids=[c[0] for c in MACRO_CASES])
def test_macro_definitions(text: str, expected: tuple) -> None:
    (macro,) = read_text(text, "tex", "t.tex").macros
    assert (macro.name, macro.nargs, macro.default, macro.body, macro.operator, macro.provide) == expected
    assert macro.span == (macro.span.__class__(0, len(text)))


def test_macro_body_offset_points_into_the_file() -> None:
    text = "% preamble\n\\newcommand{\\R}{\\mathbb{R}}\n"
    (macro,) = read_text(text, "tex", "t.tex").macros
    assert text[macro.body_start : macro.body_start + len(macro.body)] == macro.body


MALFORMED_DEFINITIONS = [
    ("no-name", "\\newcommand{}{x}", "\\newcommand not read: expected a macro name"),
    ("bad-count", "\\newcommand{\\x}[a]{x}", "the number of arguments must be 0 to 9"),
    ("unclosed-body", "\\newcommand{\\x}{x", "'{' is never closed"),
    ("delimited-def", "\\def\\x.#1.{x}", "has delimited parameters"),
]


@pytest.mark.parametrize("text, message", [c[1:] for c in MALFORMED_DEFINITIONS], ids=[c[0] for c in MALFORMED_DEFINITIONS])
def test_malformed_definitions_become_notes(text: str, message: str) -> None:
    document = read_text(text, "tex", "t.tex")
    assert document.macros == ()
    (note,) = document.notes
    assert message in note.message


def test_definitions_are_not_read_inside_comments_or_math() -> None:
    text = "% \\newcommand{\\x}{y}\n$\\def\\z{w}$\n"
    assert read_text(text, "tex", "t.tex").macros == ()


# -- \input ------------------------------------------------------------------------------


@pytest.fixture
def project(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch) -> pathlib.Path:
    """A small report on a bridge cable: main.tex with two chapters."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "chapters").mkdir()
    (tmp_path / "main.tex").write_text(
        "\\newcommand{\\stiff}{k}\n"
        "\\input{chapters/tension}\n"
        "\\[ z = \\stiff y \\]\n"
        "\\include{chapters/sag.tex}\n",
        encoding="utf-8",
    )
    (tmp_path / "chapters" / "tension.tex").write_text(
        "% cable tension\n\\begin{align}\n  \\nabla T &= \\stiff X^\\top r\n\\end{align}\n", encoding="utf-8"
    )
    (tmp_path / "chapters" / "sag.tex").write_text("\\[ s = w \\]\n", encoding="utf-8")
    return tmp_path


def _read(path: str) -> object:
    (found,) = discover([path])
    return read_path(*found)


def test_input_file_steps_report_under_their_own_path_and_lines(project: pathlib.Path) -> None:
    document = _read("main.tex")
    assert document.included == (os.path.join("chapters", "tension.tex"), os.path.join("chapters", "sag.tex"))
    tension = os.path.join("chapters", "tension.tex")
    sag = os.path.join("chapters", "sag.tex")
    assert document_steps(document) == [
        f"{tension}:3:15 1.1 \\nabla T = \\stiff X^\\top r",
        "main.tex:3:8 1.1 z = \\stiff y",
        f"{sag}:1:8 1.1 s = w",
    ]
    assert [b.source.path for b in document.blocks] == [tension, "main.tex", sag]


def test_input_cycle_is_noted_and_not_reread(project: pathlib.Path) -> None:
    (project / "chapters" / "sag.tex").write_text("\\input{../main}\n\\[ s = w \\]\n", encoding="utf-8")
    document = _read("main.tex")
    assert len(document.blocks) == 3
    assert any("a cycle of inputs" in n.message for n in document.notes)


def test_input_outside_the_root_is_noted_and_not_read(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "paper").mkdir()
    (tmp_path / "secret.tex").write_text("\\[ a = b \\]\n", encoding="utf-8")
    (tmp_path / "paper" / "p.tex").write_text("\\input{../secret}\n", encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    document = _read(os.path.join("paper", "p.tex"))
    assert document.blocks == ()
    (note,) = document.notes
    assert "outside the folder" in note.message and "not read" in note.message
    assert note.source.position(note.span.start).line == 1


def test_missing_input_file_is_a_note(project: pathlib.Path) -> None:
    (project / "main.tex").write_text("\\input{chapters/none}\n", encoding="utf-8")
    (note,) = _read("main.tex").notes
    assert note.message == "\\input{chapters/none}: file not found (looked for chapters/none.tex); not read"


def test_input_in_text_mode_is_not_followed() -> None:
    document = read_text("\\input{x}\n", "tex", "t.tex")
    assert "not followed" in document.notes[0].message


def test_a_directory_walk_reads_an_input_file_once(project: pathlib.Path) -> None:
    # The pipeline drops a found document whose path another document included.
    found = discover(["."])
    displays = [display for _, display, _ in found]
    assert displays == ["chapters/sag.tex", "chapters/tension.tex", "main.tex"]
    documents = [read_path(*item) for item in found]
    included = {p for d in documents for p in d.included}
    assert included == {"chapters/sag.tex", "chapters/tension.tex"}


def test_prose_megabyte_with_displays_reads_every_display() -> None:
    paragraph = "The sensor array drifts slowly with temperature and humidity. " * 170 + "\n\n"
    display = "\\begin{align}\n  y_i &= A_{ij} x_j\n\\end{align}\n"
    text = (paragraph + display) * 100
    document = read_text(text, "tex", "big.tex")
    assert len(text) > 1_000_000
    assert len(document.blocks) == 100
    assert all(b.kind is BlockKind.DISPLAY for b in document.blocks)
