"""The HTML report: well-formed, self-contained, MathML for each step, the LaTeX pitfalls of
latex2mathml handled (LIBRARY-NOTES §4), and a real render in headless Chromium when it is
installed (``/usr/bin/chromium``; skipped otherwise)."""

from __future__ import annotations

import io
import pathlib
import subprocess
import xml.etree.ElementTree as ET

import pytest

from stepcheck.reporters import REPORTERS
from stepcheck.reporters._mathml import clean_latex, to_mathml
from stepcheck.reporters.html import counterexample_html, value_html
from stepcheck.results import FileReport, Report
from stepcheck.verdicts import Verdict

MATHML = "{http://www.w3.org/1998/Math/MathML}"
CHROMIUM = pathlib.Path("/usr/bin/chromium")


def render(report: Report) -> str:
    out = io.StringIO()
    REPORTERS["html"](out).write(report)
    return out.getvalue()


def rows(page: str) -> list[ET.Element]:
    return [tr for tr in ET.fromstring(page).iter("tr") if (tr.get("class") or "").startswith("v-")]


def test_page_is_well_formed_and_has_a_row_per_step(report):
    page = render(report)
    root = ET.fromstring(page)  # XML-parsable: every element closed, entities escaped
    assert root.tag == "html"
    found = rows(page)
    assert len(found) == len(report.steps())
    assert [tr.get("class") for tr in found] == [f"v-{s.verdict.value}" for s in report.steps()]
    assert [h2.text for h2 in root.iter("h2")] == [f.path for f in report.files]


def test_each_step_shows_mathml_or_its_escaped_source(report):
    for step, tr in zip(report.steps(), rows(render(report))):
        cell = tr.find("td[@class='math']")
        maths = cell.findall(f"{MATHML}math")
        if step.outcome.verdict is Verdict.PARSE_ERROR:  # \frac{k}{ cannot be converted
            assert maths == []
            assert cell.find("code[@class='latex']").text == r"h = \frac{k}{"
        else:
            assert len(maths) == 1 and maths[0].get("display") == "block", step.lhs
            assert cell.find("code[@class='src']").text.startswith(step.lhs.split()[0])


def test_details_verdict_and_method(report):
    by_line = {tr.find("td[@class='loc']").text: tr for tr in rows(render(report))}
    fails = by_line["15:9"]
    assert fails.find(".//span[@class='badge']").text == "fails"
    assert fails.find(".//p[@class='message']").text == "the sides differ on trial 1 of 6"
    assert fails.find(".//p[@class='hint']").text.startswith("hint: equal after a transpose")
    terms = [dt.text for dt in fails.iter("dt")]
    assert terms == ["sizes", "u", "A", "lhs", "rhs"]
    holds = by_line["14:9"]
    assert holds.find(".//div[@class='method']").text == "symbolic"


def test_awkward_text_is_escaped(report):
    page = render(report)
    odd = next(tr for tr in rows(page) if tr.find("td[@class='loc']").text == "4:2")
    message = odd.find(".//p[@class='message']").text
    assert message == "differs: 50% off, a,b:c\nsecond line <i>½</i> & `tick` | pipe"
    assert "<i>½</i>" not in page  # only as &lt;i&gt;


def test_self_contained(report):
    page = render(report)
    root = ET.fromstring(page)
    assert not list(root.iter("script")) and not list(root.iter("link")) and not list(root.iter("img"))
    assert "src=" not in page and "url(" not in page and "@import" not in page
    assert page.count("http") == page.count("http://www.w3.org/1998/Math/MathML")
    assert root.find("head/style") is not None


def test_empty_report_page(reports):
    root = ET.fromstring(render(reports["empty"]()))
    assert "No documents were checked." in "".join(root.itertext())


@pytest.mark.parametrize("latex, cleaned", [
    (r"a &= b \\ &= c \label{eq:grad}", "a = b = c"),
    (r"x \nonumber", "x"),
    (r"\bigl( x \bigr) \Big\| y \Big\|", r"( x ) \| y \|"),
    (r"\operatorname*{arg\,min}_w L", r"\operatorname{argmin}_w L"),
    (r"q := A w % a comment", r"q \coloneqq A w"),
    (r"\text{a & b} & c", r"\text{a & b} c"),
], ids=["rows-label", "nonumber", "sizing", "operatorname-star", "define-comment", "ampersand-in-text"])
def test_clean_latex(latex, cleaned):
    assert clean_latex(latex) == cleaned


@pytest.mark.parametrize("latex", [
    r"\frac{\partial L}{\partial w_j}",
    r"\sum_{i=1}^{n} x_i^\top A x_i",
    r"\operatorname{tr}\left(X^\top X\right)",
    r"\langle A, B\rangle = \|x\|_2^2",
    r"\nabla_{\mathbf w} f = X^{\mathsf T} r",
    r"\Sigma \succeq 0",
    r"L \overset{(a)}{=} \tfrac12 r^\top r",
], ids=["partial", "sum", "trace", "inner-norm", "nabla", "succeq", "marked-equals"])
def test_to_mathml_renders(latex):
    mathml = to_mathml(latex)
    assert mathml is not None
    root = ET.fromstring(mathml)
    assert root.tag == f"{MATHML}math"
    assert "\\" not in "".join(root.itertext())  # no macro left unconverted


def test_relations_latex2mathml_gets_wrong_become_operators():
    mathml = to_mathml(r"\Sigma \succeq 0")
    assert "<mo>&#x02AB0;</mo>" in mathml and "<mi>&#x02AB0;</mi>" not in mathml


@pytest.mark.parametrize("latex", [
    r"\frac{a}{",            # NoAvailableTokensError
    r"x^{",                  # MissingSuperScriptOrSubscriptError
    r"\left( x",             # ExtraLeftOrMissingRightError
    r"\vect{x} = y",         # a document macro latex2mathml passes through as <mi>\vect</mi>
    r"\text{a & b} = c",     # a raw & in <mtext>: not well-formed
    "",
], ids=["open-frac", "open-sup", "left-without-right", "unknown-macro", "raw-ampersand", "empty"])
def test_to_mathml_falls_back(latex):
    assert to_mathml(latex) is None


@pytest.mark.parametrize("value, expected", [
    (3, "<mn>3</mn>"),
    (-2, "<mo>\u2212</mo><mn>2</mn>"),
    ("1/3", "<mn>1/3</mn>"),
    ([1, 2], "<mtr><mtd><mn>1</mn></mtd></mtr><mtr><mtd><mn>2</mn></mtd></mtr>"),
    ([[1, 2]], "<mtr><mtd><mn>1</mn></mtd><mtd><mn>2</mn></mtd></mtr>"),
    (0.1 + 0.2, "<mn>0.3</mn>"),
], ids=["int", "negative", "rational", "column", "row", "float"])
def test_counterexample_values_as_mathml(value, expected):
    html = value_html(value)
    assert expected in html
    ET.fromstring(html)


@pytest.mark.parametrize("value", [[[[1]]], ["a", "b"], list(range(20)), [[1, 2], [3]], True],
                         ids=["3-d", "words", "long", "ragged", "bool"])
def test_counterexample_values_as_code(value):
    assert value_html(value).startswith("<code>")


def test_counterexample_keeps_unknown_keys():
    html = counterexample_html({"sizes": {"n": 2}, "inputs": {}, "lhs": 1, "rhs": 2, "ratio": "-1"})
    root = ET.fromstring(html)
    assert [dt.text for dt in root.iter("dt")] == ["sizes", "lhs", "rhs", "ratio"]


@pytest.mark.skipif(not CHROMIUM.exists(), reason="headless Chromium is not installed at /usr/bin/chromium")
def test_chromium_renders_the_report(report, tmp_path):
    page = tmp_path / "report.html"
    page.write_text(render(report), encoding="utf-8")
    shot = tmp_path / "report.png"
    command = [str(CHROMIUM), "--headless", "--no-sandbox", "--hide-scrollbars", "--window-size=1200,900",
               f"--screenshot={shot}", page.as_uri()]
    done = subprocess.run(command, capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr[-2000:]
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert (width, height) == (1200, 900)
    assert len(data) > 20_000  # a blank 1200x900 page is about 5 kB (measured: 5,063 bytes)
