"""The math reader's vocabulary: which LaTeX command means what, and the ambiguity rules.

Everything the reader knows about LaTeX names is data in this module, so a new command
is one table entry, not a new branch.  :data:`AMBIGUITY_RULES` is the one place where
every reading the reader *chooses* (where the text alone allows more than one) is
written down; each rule id is also the title prefix of a case in
``tests/cases/parser_snippets.txt`` that shows it, and :func:`stepcheck.explain.explain_math`
names the rule for every ambiguity it meets.
"""

from __future__ import annotations

from ..context.model import Vocabulary

# --------------------------------------------------------------------------- ambiguity rules

#: Rule id → the reading the reader chooses.  Ids are stable (tests and ``explain`` use them).
AMBIGUITY_RULES: dict[str, str] = {
    "juxtaposition": "adjacent factors multiply, left to right (Xw, 2x, a(b+c))",
    "unary-minus": "a leading minus covers its whole product term: -a b = -(ab), -x^2 = -(x^2)",
    "operator-precedence": (
        "products bind in three levels, each left to right: juxtaposition and / tightest, then "
        "\\times \\odot \\circ \\otimes, then \\cdot loosest (a \\cdot B c = a \\cdot (Bc))"
    ),
    "slash": "a / b binds like juxtaposition, left to right: a/b c = (a/b) c, a b/c = (ab)/c",
    "function-applied": "a known function followed by a parenthesis (or a brace group) is applied to it",
    "function-next-factor": (
        "a known function with no parenthesis whose argument starts with a symbol takes the next "
        "power-level factor: \\log x y = (\\log x) y, \\exp x^2 = \\exp(x^2), \\log\\det\\Sigma = logdet(\\Sigma)"
    ),
    "function-number-argument": (
        "a known function with no parenthesis whose argument starts with a number takes the number "
        "and the symbols juxtaposed after it (a monomial): \\cos 2t = \\cos(2t), \\sin 2\\pi f t = "
        "\\sin(2\\pi f t), \\log 2\\pi\\sigma^2 = \\log(2\\pi\\sigma^2); it stops at anything else "
        "(\\cos 2t \\sin t, \\exp 3x (1+x))"
    ),
    "function-power": "a power written on a function applies to its value: \\cos^2 t = (\\cos t)^2",
    "dual-role-symbol": (
        "\\sigma and declared functions apply only to an argument in parentheses right after them; "
        "otherwise they are symbols (\\sigma^2 x, \\sigma_{ij}, bare \\sigma)"
    ),
    "undeclared-product": "f(x+1) is a product unless f is declared a function (function f)",
    "partial-reach": "\\partial_i u_j v_j is (\\partial_i u_j) v_j: the subscript form applies to the next factor only",
    "numbered-name": "J_2, R_1, \\beta_0 in a file that writes the letter only with numbers: a scalar named with its number",
    "labelled-function": "p_Z(z) with p (or p_Z) declared a function applies the function p_Z, its label part of its name",
    "transpose": (
        "^T ^\\top ^{\\mathsf T} ^\\intercal are a transpose; T elsewhere (T_{ij}) is a symbol"
    ),
    "inverse-transpose": "^{-T} and ^{-\\top} are the transpose of the inverse",
    "superscript-label": (
        "^{(l)}, ^{(2)}, ^{(enc)}, ^{(t+1)} and ^* are part of the symbol's name (W^{(2)}, "
        "\\theta^{*}, an iteration counter w^{(t+1)}): a superscript that is one parenthesised "
        "group names the symbol; only on Euler's e is it an exponent (e^{(a+b)} = e^{a+b}); a "
        "parenthesis followed by more (x^{(n-1)/2}) is an exponent"
    ),
    "label-then-mark": (
        "a superscript that starts with a label in parentheses and goes on with a transpose, an "
        "inverse or a whole-number power applies that mark to the labelled symbol: W^{(2)\\top} = "
        "(W^{(2)})^\\top, W^{(l)T}, W^{(2)-1} = (W^{(2)})^{-1}, h^{(1)2} = (h^{(1)})^2; any other "
        "superscript that starts with a parenthesis is read whole (e^{(a+b)t} is a power)"
    ),
    "scripts-attach": (
        "sub- and superscript attach to the symbol in either order: x^2_i = x_i^2 = (x_i)^2, "
        "\\mathbf{x}_i^\\top = (\\mathbf{x}_i)^\\top"
    ),
    "subscript-index": (
        "single lowercase Latin letters that are not dimensions, functions or labels, and "
        "declared index names, are index subscripts"
    ),
    "subscript-time-label": (
        "a subscript of time steps, with a bar or a shift (P_{k|k-1}, \\hat{x}_{k|k}, P_{k-1|k-1}, "
        "x_{t+1}), is part of the symbol's name, so P_{k|k-1} and P_{k-1|k-1} are two symbols; its "
        "letters (k, t) are then labels in the whole document (K_k is a name), unless the document "
        "sums over them, writes them in a superscript or declares them indices; index arithmetic on "
        "an index (x_{i-1} under \\sum_i) is not read"
    ),
    "subscript-dimension": "a dimension letter in a subscript is a fixed component: x_n is the n-th (last)",
    "subscript-digits": (
        "each digit of a subscript is one component (A_{12} = row 1, column 2); "
        "commas or braces give multi-digit components (A_{10,2}, x_{{10}})"
    ),
    "subscript-zero-name": (
        "when counting is one-based, a numeric subscript containing 0 names a symbol of its own "
        "(\\beta_0, x_0)"
    ),
    "subscript-label": (
        "\\text{..}, \\mathrm{..}, declared labels, uppercase letters and non-index Greek letters "
        "in a subscript are part of the name (x_{\\text{max}} is named x_{max})"
    ),
    "component": "a subscript on a parenthesised expression selects its component: (AB)_{ij}",
    "group": (
        "a brace group {..} groups like parentheses, and scripts after a braced single symbol "
        "attach to that symbol ({x}_i = x_i)"
    ),
    "sum-reach": "\\sum and \\prod reach to the end of their product term: \\sum_i a_i b_i + c = (\\sum_i a_i b_i) + c",
    "derivative-reach": (
        "operator derivatives (\\frac{\\partial}{\\partial x}, \\frac{d}{dt}, \\partial_x, \\nabla_w) "
        "reach to the end of their product term"
    ),
    "differential-d": (
        "d is the differential of a derivative in \\frac{d..}{d..} with both parts starting with d; "
        "outside it, an upright d before an operand (\\mathrm{d}W, \\mathrm{d}\\mathbf{x}) or a plain "
        "d written after a spacing command right before a symbol (f(x)\\,dx) is a differential form, "
        "which is not checked; any other d is a symbol (d_i, \\frac{1}{d}, x^d, a dimension d)"
    ),
    "partial-coordinate": (
        "\\partial_i with an index letter among i..s (or a declared index) is the derivative by "
        "the coordinate x_i; any other subscript names the variable (\\partial_t, \\partial_x)"
    ),
    "bars": (
        "| and \\| open in operand position and otherwise close the innermost open bar of their "
        "kind: |a| |b| is a product of two absolute values"
    ),
    "kronecker-delta": "\\delta with two subscripts is the Kronecker delta; \\delta_i is a symbol",
    "levi-civita": "\\epsilon or \\varepsilon with two or more subscripts is the Levi-Civita symbol",
    "identity": "I, \\mathbf{I} (optionally I_n) are the identity; I_{ij} is the Kronecker delta",
    "ones-zero": "\\mathbf{1}, \\mathbb{1} are the ones vector and \\mathbf{0} the zero tensor",
    "constant": "e is Euler's number and \\pi the constant, unless declared or written with subscripts",
    "prime": "a prime names a new symbol: x' is a symbol named x', not a derivative or transpose",
    "up-down": (
        "in up-down mode, superscript index letters are upper indices (digits stay powers) and "
        "T^{i}{}_{j} is one tensor"
    ),
    "tex-argument": (
        "a macro or script argument without braces is one token, as in TeX: \\frac12 = 1/2, "
        "x^12 = x^1 2"
    ),
    "word-name": "\\mathrm{word} and \\text{word} name a symbol (or a function, when known or declared)",
    "root": "\\sqrt[n]{x} is x^{1/n}",
    "vmatrix": "a vmatrix is the determinant of the matrix literal",
}

# --------------------------------------------------------------------------- letters

#: Greek letters (and \ell): the canonical name is the command itself.
GREEK = frozenset(
    "\\" + name
    for name in (
        "alpha beta gamma delta epsilon varepsilon zeta eta theta vartheta iota kappa varkappa "
        "lambda mu nu xi omicron pi varpi rho varrho sigma varsigma tau upsilon phi varphi chi "
        "psi omega Gamma Delta Theta Lambda Xi Pi Sigma Upsilon Phi Psi Omega varGamma "
        "varDelta varTheta varLambda varXi varPi varSigma varUpsilon varPhi varPsi varOmega "
        "ell"
    ).split()
)

#: Greek letters that are index names by default (none: ``index \\mu \\nu`` declares them).
DEFAULT_GREEK_INDICES: frozenset[str] = frozenset()

#: Letters read as ``\\partial_s`` coordinate indices (``\\partial_i f`` = ∂f/∂x_i).
COORDINATE_INDEX_LETTERS = frozenset("ijklmpqrs")

#: The coordinate symbol ``\\partial_i`` differentiates by (common practice: x^i / x_i).
COORDINATE_NAME = "x"

# --------------------------------------------------------------------------- fonts and accents

#: Bold commands: the symbol keeps the plain letter's name, with ``bold=True``.
BOLD_FONTS = frozenset({"\\mathbf", "\\boldsymbol", "\\bm", "\\vec", "\\mathbold", "\\pmb", "\\bf"})

#: Fonts that give a symbol a name of its own (``\\mathcal{L}``).
NAMED_FONTS = frozenset({"\\mathcal", "\\mathbb", "\\mathscr", "\\mathfrak", "\\mathbbm"})

#: Upright or other fonts that do not change a single letter's name (``\\mathrm{d}`` is d);
#: a multi-letter argument is a word (``\\mathrm{MSE}``).
PLAIN_FONTS = frozenset({"\\mathrm", "\\mathit", "\\mathsf", "\\mathtt", "\\mathnormal", "\\rm"})

#: Fonts that set a letter upright: ``\\mathrm{d}`` before an operand is a differential (rule
#: ``differential-d``), while an italic ``\\mathit{d}`` is the letter d.
UPRIGHT_FONTS = frozenset({"\\mathrm", "\\rm", "\\text", "\\textrm", "\\textnormal", "\\mbox", "\\operatorname"})

#: Text commands whose argument (one TEXT token) is a word.
TEXT_FONTS = frozenset({"\\text", "\\textrm", "\\textit", "\\textsf", "\\texttt", "\\textnormal", "\\mbox", "\\textbf"})

#: Accents: the accented symbol has a name of its own (``\\hat{y}``).
ACCENTS = frozenset(
    {
        "\\hat", "\\tilde", "\\bar", "\\dot", "\\ddot", "\\check", "\\breve", "\\widehat",
        "\\widetilde", "\\overline", "\\acute", "\\grave", "\\mathring", "\\underline",
    }
)

# --------------------------------------------------------------------------- functions

#: Function commands → canonical function name (never symbols; need an argument).
FUNCTION_COMMANDS: dict[str, str] = {
    "\\exp": "exp", "\\log": "log", "\\ln": "ln", "\\sin": "sin", "\\cos": "cos",
    "\\tan": "tan", "\\sinh": "sinh", "\\cosh": "cosh", "\\tanh": "tanh", "\\det": "det",
    "\\tr": "tr", "\\Tr": "tr", "\\trace": "tr", "\\diag": "diag",
}

#: Commands that are a function when a parenthesis follows and a symbol otherwise.
DUAL_FUNCTION_COMMANDS: dict[str, str] = {"\\sigma": "sigma"}

#: Operator names (``\\operatorname{…}``, ``\\mathrm{…}``, ``\\text{…}``) → canonical function.
OPERATOR_NAMES: dict[str, str] = {
    "tr": "tr", "Tr": "tr", "trace": "tr", "softmax": "softmax", "diag": "diag",
    "vec": "vec", "det": "det", "exp": "exp", "log": "log", "ln": "ln", "sin": "sin",
    "cos": "cos", "tan": "tan", "sinh": "sinh", "cosh": "cosh", "tanh": "tanh",
    "sigmoid": "sigma", "logdet": "logdet", "sqrt": "sqrt",
}

#: A function followed by one of these commands fuses with it (``\\log\\det`` → logdet).
FUSED_FUNCTIONS: dict[tuple[str, str], str] = {("log", "det"): "logdet", ("ln", "det"): "logdet"}

#: Known functions: the LaTeX the printer writes for each canonical name.
FUNCTION_LATEX: dict[str, str] = {
    "exp": "\\exp", "log": "\\log", "ln": "\\ln", "sin": "\\sin", "cos": "\\cos",
    "tan": "\\tan", "sinh": "\\sinh", "cosh": "\\cosh", "tanh": "\\tanh", "det": "\\det",
    "sigma": "\\sigma", "logdet": "\\log\\det", "tr": "\\operatorname{tr}",
    "softmax": "\\operatorname{softmax}", "diag": "\\operatorname{diag}",
    "vec": "\\operatorname{vec}", "sqrt": "\\sqrt",
}

#: Words in a subscript that are labels although written as commands (``x_{\\max}``).
LABEL_COMMANDS: dict[str, str] = {"\\max": "max", "\\min": "min", "\\star": "*", "\\ast": "*"}

# --------------------------------------------------------------------------- operators

#: Explicit product operators → (node class name, level).  Level 1 binds loosest;
#: juxtaposition and ``/`` (level 3) bind tightest (rule ``operator-precedence``).
PRODUCT_OPERATORS: dict[str, tuple[str, int]] = {
    "\\cdot": ("Dot", 1),
    "\\times": ("Cross", 2),
    "\\odot": ("Hadamard", 2),
    "\\circ": ("Hadamard", 2),
    "\\otimes": ("Kron", 2),
}

#: The printer's command for each product node.
PRODUCT_LATEX: dict[str, str] = {"Dot": "\\cdot", "Cross": "\\times", "Hadamard": "\\odot", "Kron": "\\otimes"}

#: Division written inline, binding like juxtaposition.
SLASH_OPERATORS = frozenset({"/", "\\div"})

#: Big operators → ``BigOp.op``.
BIG_OPERATORS: dict[str, str] = {"\\sum": "sum", "\\prod": "prod"}

#: Fractions (all read alike).
FRACTIONS = frozenset({"\\frac", "\\dfrac", "\\tfrac", "\\cfrac"})

#: Commands the reader recognises but the tool does not check, with the message (it names the
#: construct): the step is ``unsupported`` (SPEC §9), not a ``parse-error``.
UNSUPPORTED: dict[str, str] = {
    "\\pm": "a plus-or-minus (\\pm) is not checked: write the two cases as separate steps",
    "\\mp": "a minus-or-plus (\\mp) is not checked: write the two cases as separate steps",
    "\\int": "an integral (\\int) is not checked",
    "\\iint": "an integral (\\iint) is not checked",
    "\\iiint": "an integral (\\iiint) is not checked",
    "\\oint": "an integral (\\oint) is not checked",
    "\\lim": "a limit (\\lim) is not checked",
    "\\limsup": "a limit (\\limsup) is not checked",
    "\\liminf": "a limit (\\liminf) is not checked",
    "\\max": "a maximum (\\max) is not checked (only x_{\\max}, a subscript naming a symbol, is read)",
    "\\min": "a minimum (\\min) is not checked (only x_{\\min}, a subscript naming a symbol, is read)",
    "\\sup": "a supremum (\\sup) is not checked",
    "\\inf": "an infimum (\\inf) is not checked",
    "\\arg": "an argmin or argmax (\\arg) is not checked",
    "\\cdots": "an ellipsis (\\cdots) is not checked: write the expression out or use \\sum",
    "\\ldots": "an ellipsis (\\ldots) is not checked: write the expression out or use \\sum",
    "\\dots": "an ellipsis (\\dots) is not checked: write the expression out or use \\sum",
    "\\dotsb": "an ellipsis (\\dotsb) is not checked: write the expression out or use \\sum",
    "\\dotsc": "an ellipsis (\\dotsc) is not checked: write the expression out or use \\sum",
    "\\vdots": "an ellipsis (\\vdots) is not checked",
    "\\ddots": "an ellipsis (\\ddots) is not checked",
    "\\infty": "infinity (\\infty) as a value is not checked (it is read only as a norm subscript, \\|x\\|_\\infty)",
    "\\dagger": "a pseudo-inverse or adjoint (\\dagger) is not checked",
    "\\binom": "a binomial coefficient (\\binom) is not checked",
    "\\choose": "a binomial coefficient (\\choose) is not checked",
    "\\lfloor": "a floor (\\lfloor) is not checked",
    "\\lceil": "a ceiling (\\lceil) is not checked",
    "\\rfloor": "a floor (\\rfloor) is not checked",
    "\\rceil": "a ceiling (\\rceil) is not checked",
    "\\middle": "a \\middle delimiter (a conditional or set-builder bar) is not checked",
    "\\overset": "a symbol set over another (\\overset) is not checked (it is read only over a relation)",
    "\\stackrel": "a symbol set over another (\\stackrel) is not checked (it is read only over a relation)",
    "\\underset": "a symbol set under another (\\underset) is not checked (it is read only under a relation)",
}

#: Commands the reader cannot read where they stand (a ``parse-error``), with the reason.
NOT_READ: dict[str, str] = {
    "\\ast": "'\\ast' between factors is not read (write \\cdot or juxtapose)",
    "\\star": "'\\star' between factors is not read (write \\cdot or juxtapose)",
}

#: Environments the reader recognises inside an expression but the tool does not check.
UNSUPPORTED_ENVIRONMENTS: dict[str, str] = {
    "cases": "a case distinction (cases) is not checked: write each case as its own step",
    "dcases": "a case distinction (dcases) is not checked: write each case as its own step",
    "rcases": "a case distinction (rcases) is not checked: write each case as its own step",
    "Vmatrix": (
        "a matrix literal between double bars (Vmatrix) is not checked: write the norm with "
        "\\|…\\|_F or \\|…\\|_2"
    ),
}

#: Operator names (``\\operatorname{…}``, ``\\mathrm{…}``) of constructs the tool does not check,
#: unless the document declares the name a function: a step that uses one is ``unsupported``.
UNSUPPORTED_OPERATORS: dict[str, str] = {
    "Cov": "a covariance (Cov)", "cov": "a covariance (cov)", "Var": "a variance (Var)",
    "var": "a variance (var)", "Corr": "a correlation (Corr)", "corr": "a correlation (corr)",
    "E": "an expectation (E)", "Pr": "a probability (Pr)", "KL": "a divergence (KL)",
    "argmin": "an argmin", "argmax": "an argmax",
}

#: Commands that mean something only inside a superscript, with what to write instead (so an
#: error never calls them unknown).
SUPERSCRIPT_ONLY: dict[str, str] = {
    "\\top": "a transpose mark",
    "\\intercal": "a transpose mark",
    "\\prime": "a prime mark",
}

#: What may follow a label in one superscript, for error messages.
AFTER_LABEL = (
    "after a label a superscript holds only a transpose (\\top, T, \\mathsf{T}), an inverse (-1, "
    "-\\top) or a whole-number power, as in ^{(2)\\top}"
)

#: What a superscript may hold, for error messages.
SUPERSCRIPT_FORMS = (
    "a superscript holds a transpose (^\\top, ^T, ^{\\mathsf{T}}), an inverse (^{-1}, ^{-\\top}), a "
    "power, or a label in parentheses optionally followed by one of those (^{(2)}, ^{(2)\\top}, ^{(2)-1})"
)

#: Characters the reader recognises but the tool does not check (``unsupported``), with the message.
UNSUPPORTED_SYMBOLS: dict[str, str] = {
    "!": "a factorial (!) is not checked",
}

#: Characters the reader cannot read where an operator or operand is due (``parse-error``).
NOT_READ_SYMBOLS: dict[str, str] = {
    "*": "'*' is not read as a product: write \\cdot or put the factors side by side",
}

#: Symbol names the reader refuses (unless declared as tensors), with the reason it gives.
UNSUPPORTED_NAMES: dict[str, str] = {
    "\\mathbb{E}": "an expectation (\\mathbb{E}) is not checked",
    "\\mathbb{P}": "a probability (\\mathbb{P}) is not checked",
    "\\mathbb{V}": "a variance (\\mathbb{V}) is not checked",
}

# --------------------------------------------------------------------------- delimiters

#: Opening delimiter → (closing delimiter, kind).  Kinds: ``paren`` (grouping),
#: ``norm``, ``abs``, ``inner``.  A delimiter that is its own closer is a *bar*.
DELIMITERS: dict[str, tuple[str, str]] = {
    "(": (")", "paren"),
    "[": ("]", "paren"),
    "\\{": ("\\}", "paren"),
    "\\lbrace": ("\\rbrace", "paren"),
    "\\lbrack": ("\\rbrack", "paren"),
    "\\lparen": ("\\rparen", "paren"),
    "\\langle": ("\\rangle", "inner"),
    "\\lVert": ("\\rVert", "norm"),
    "\\lvert": ("\\rvert", "abs"),
    "\\|": ("\\|", "norm"),
    "\\Vert": ("\\Vert", "norm"),
    "|": ("|", "abs"),
    "\\vert": ("\\vert", "abs"),
}

#: Every closing delimiter (never starts a factor).
CLOSERS = frozenset(close for close, _ in DELIMITERS.values()) - {"|", "\\|", "\\Vert", "\\vert"}

#: Bars: the same token opens and closes.
BARS = frozenset(opener for opener, (closer, _) in DELIMITERS.items() if opener == closer)

#: Bars by kind, so ``\\|`` and ``\\Vert`` close each other.
BAR_KIND: dict[str, str] = {bar: DELIMITERS[bar][1] for bar in BARS}

# --------------------------------------------------------------------------- dropped tokens

#: Spacing and style commands dropped before reading.
DROPPED = frozenset(
    {
        "\\,", "\\;", "\\!", "\\:", "\\ ", "\\>", "\\quad", "\\qquad", "\\displaystyle",
        "\\textstyle", "\\scriptstyle", "\\scriptscriptstyle", "\\limits", "\\nolimits",
        "\\nonumber", "\\notag", "\\thinspace", "\\medspace", "\\thickspace", "\\negthinspace",
        "\\enspace", "\\allowbreak", "\\relax", "\\hfill", "\\nobreak", "\\negmedspace", "\\negthickspace",
        # Layout wrappers: their argument stays, read as a brace group (the splitter unwraps them).
        "\\lefteqn", "\\mathrlap", "\\mathllap", "\\mathclap",
    }
)

#: Positive spacing commands among :data:`DROPPED`: a plain ``d`` written after one of them and
#: right before a symbol is a differential (``f(x)\\,dx``; rule ``differential-d``).
SPACING = frozenset({"\\,", "\\;", "\\:", "\\ ", "\\>", "\\thinspace", "\\medspace", "\\thickspace", "\\enspace"})

#: Sizing commands → the delimiter role they give the next token.
SIZING: dict[str, str] = {
    "\\left": "open", "\\right": "close", "\\middle": "middle",
    "\\big": "any", "\\Big": "any", "\\bigg": "any", "\\Bigg": "any",
    "\\bigl": "open", "\\Bigl": "open", "\\biggl": "open", "\\Biggl": "open",
    "\\bigr": "close", "\\Bigr": "close", "\\biggr": "close", "\\Biggr": "close",
    "\\bigm": "any", "\\Bigm": "any", "\\biggm": "any", "\\Biggm": "any",
}

# --------------------------------------------------------------------------- superscripts

#: Superscript contents (token texts, braces dropped) with a fixed meaning.
SUPERSCRIPT_MARKS: dict[tuple[str, ...], str] = {
    ("\\top",): "transpose",
    ("T",): "transpose",
    ("\\intercal",): "transpose",
    ("\\mathsf", "T"): "transpose",
    ("\\mathrm", "T"): "transpose",
    ("\\text", "T"): "transpose",
    ("\\textsf", "T"): "transpose",
    ("\\textrm", "T"): "transpose",
    ("\\rm", "T"): "transpose",
    ("\\sf", "T"): "transpose",
    ("-", "\\top"): "inverse-transpose",
    ("-", "T"): "inverse-transpose",
    ("-", "\\intercal"): "inverse-transpose",
    ("-", "\\mathsf", "T"): "inverse-transpose",
    ("-", "\\mathrm", "T"): "inverse-transpose",
    ("*",): "star",
    ("\\ast",): "star",
    ("\\star",): "star",
    ("\\prime",): "prime",
    ("\\prime", "\\prime"): "prime2",
    ("\\dagger",): "unsupported",
    ("+",): "unsupported",
}

# --------------------------------------------------------------------------- environments

#: Matrix environments → what the literal means (``det`` for vmatrix).
MATRIX_ENVIRONMENTS: dict[str, str] = {
    "pmatrix": "matrix", "bmatrix": "matrix", "Bmatrix": "matrix", "matrix": "matrix",
    "smallmatrix": "matrix", "psmallmatrix": "matrix", "bsmallmatrix": "matrix", "array": "matrix",
    "vmatrix": "det", "vsmallmatrix": "det",
}
# The starred forms (``pmatrix*`` of mathtools) take a column alignment ``[r]`` and read alike.
MATRIX_ENVIRONMENTS.update({name + "*": meaning for name, meaning in list(MATRIX_ENVIRONMENTS.items()) if name != "array"})

#: Norm subscripts → ``Norm.kind``.
NORM_KINDS: dict[tuple[str, ...], str] = {
    ("2",): "2", ("1",): "1", ("F",): "F", ("\\infty",): "inf", ("\\mathrm", "F"): "F",
    ("\\text", "F"): "F", ("\\mathrm", "fro"): "F", ("\\text", "fro"): "F", ("\\mathsf", "F"): "F",
    ("\\mathcal", "F"): "F", ("\\textrm", "F"): "F",
}

#: Relations and separators that end a side (they never belong inside one).
RELATION_TEXTS = frozenset(
    {"=", "<", ">", "\\le", "\\leq", "\\ge", "\\geq", "\\neq", "\\ne", "\\approx", "\\simeq",
     "\\sim", "\\propto", "\\equiv", "\\coloneqq", "\\triangleq", "\\preceq", "\\succeq",
     "\\prec", "\\succ", "\\in", "\\implies", "\\Rightarrow", "\\iff", "\\to", "\\mapsto",
     "\\leqslant", "\\geqslant", "\\lt", "\\gt", "\\coloneq", "\\eqcolon", "\\eqqcolon",
     "\\Longrightarrow", "\\Leftrightarrow", "\\Longleftrightarrow", "\\therefore", "\\because",
     "\\Leftarrow", "\\Longleftarrow", "\\impliedby"}
)


def is_index_name(name: str, vocabulary: Vocabulary) -> bool:
    """Whether a subscript letter or command is an index (rule ``subscript-index``).

    :param name: a letter (``"i"``) or a command (``"\\\\mu"``).
    :param vocabulary: the document's names.
    :returns: True for declared index names and for single lowercase Latin letters that
        are not dimensions, functions or labels.
    """
    if name in vocabulary.index_letters or name in DEFAULT_GREEK_INDICES:
        return True
    return (
        len(name) == 1
        and "a" <= name <= "z"
        and name not in vocabulary.dimensions
        and name not in vocabulary.functions
        and name not in vocabulary.labels
    )
