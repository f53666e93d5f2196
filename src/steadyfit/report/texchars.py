"""Unicode table text to LaTeX that an OT1 document sets with no extra package.

Greek letters, sub- and superscripts, minus signs, relations and ``ln(...)`` terms become
mathematics (neighbouring formulas merged); LaTeX specials are escaped and accidental
ligatures broken; accented Latin letters that LaTeX's default UTF-8 input sets in OT1 stay
as they are; any other character becomes ``?`` (the renderer lists those in a comment).
"""

from __future__ import annotations

import functools
import re
import string
import unicodedata
from dataclasses import dataclass


def _pairs(text: str) -> dict[str, str]:
    """``"char latex char latex ..."`` as a mapping."""
    items = text.split()
    return dict(zip(items[::2], items[1::2], strict=True))


_GREEK = dict(zip("αβγδεζηθικλμνξοπρςστυφχψωΓΔΘΛΞΠΣΥΦΨΩ", (
    r"\alpha \beta \gamma \delta \varepsilon \zeta \eta \theta \iota \kappa \lambda \mu \nu "
    r"\xi o \pi \rho \varsigma \sigma \tau \upsilon \varphi \chi \psi \omega \Gamma \Delta "
    r"\Theta \Lambda \Xi \Pi \Sigma \Upsilon \Phi \Psi \Omega").split(), strict=True))
_GREEK |= {ch: rf"\mathrm{{{latin}}}" for ch, latin in zip("ΑΒΕΖΗΙΚΜΝΟΡΤΧ", "ABEZHIKMNOPTX",
                                                          strict=True)}
_GREEK |= _pairs(r"µ \mu ϵ \epsilon ϑ \vartheta ϕ \phi ϖ \varpi ϱ \varrho ∆ \Delta")
# spaced in mathematics: binary operators, then relations
_BINARY = _pairs(r"− - ± \pm ∓ \mp × \times ÷ \div · \cdot ⋅ \cdot ∗ \ast ∩ \cap ∪ \cup")
_RELATION = _pairs(r"""≤ \leq ≥ \geq ≠ \neq ≈ \approx ≡ \equiv ∼ \sim ∝ \propto ≪ \ll ≫ \gg
    → \rightarrow ← \leftarrow ⇒ \Rightarrow ↔ \leftrightarrow ∈ \in ∉ \notin ⊂ \subset < < > >""")
_ORDINARY = _GREEK | _pairs(r"""∞ \infty ∂ \partial ∑ \sum ∏ \prod √ \surd ∅ \emptyset ¬ \neg
    ∇ \nabla ∫ \int ∀ \forall ∃ \exists • \bullet ∘ \circ ‖ \| ⟨ \langle ⟩ \rangle | |
    ° {}^{\circ} ′ {}^{\prime}""")
# mathematics: character -> (LaTeX, spaced operator or relation)
_MATH = ({c: (t, False) for c, t in _ORDINARY.items()}
         | {c: (t, True) for c, t in (_BINARY | _RELATION).items()})
# text: character -> LaTeX that an OT1 document sets as that character
_TEXT = _pairs(r"""\ \textbackslash{} & \& % \% $ \$ # \# _ \_ { \{ } \} ~ \textasciitilde{}
    ^ \textasciicircum{} ` \`{} – \textendash{} ‒ \textendash{} — \textemdash{}
    ― \textemdash{} ‐ - ‑ \mbox{-} … \ldots{} \u2009 \, \u202f \, \u2002 \enspace{}
    \u2003 \quad{} \u200b \hspace{0pt} \u00ad \- ‘ ` ’ ' “ `` ” '' § \S{} ¶ \P{} † \dag{}
    ‡ \ddag{} © \copyright{} £ \pounds{} ¡ \textexclamdown{} ¿ \textquestiondown{}""")
_TEXT = {(k.encode().decode("unicode_escape") if k.startswith("\\u") else k): v
         for k, v in _TEXT.items()} | {"\u00a0": "~", "\t": " ", "\n": " ", "\r": " "}
# accents LaTeX's UTF-8 input sets in OT1 (not the ogonek)
_ACCENTS = {0x300, 0x301, 0x302, 0x303, 0x304, 0x306, 0x307, 0x308, 0x30A, 0x30B, 0x30C,
            0x327}
_LETTERS = set("ßæÆœŒøØłŁı")
_SYMBOLIC = set(" +-=,./*()[]" + string.digits + string.ascii_letters) | set(_MATH)
LOG_TERM = re.compile(r"ln\(([^()]*)\)")
_WORD_RUN = re.compile(r"[A-Za-z]{2,}")
_COMMAND_END = re.compile(r"\\[A-Za-z]+$")


def printable_letter(ch: str) -> bool:
    """An accented Latin letter that LaTeX's default UTF-8 input sets in OT1."""
    if ch in _LETTERS:
        return True
    d = unicodedata.normalize("NFD", ch)
    return (0xC0 <= ord(ch) <= 0x17F and len(d) == 2 and d[0].isascii() and d[0].isalpha()
            and ord(d[1]) in _ACCENTS)


@functools.lru_cache(maxsize=512)
def script_of(ch: str) -> tuple[str, str] | None:
    """A sub- or superscript character as (``_`` or ``^``, the LaTeX of what it shows)."""
    tag = unicodedata.decomposition(ch).split(" ")[0]
    base = unicodedata.normalize("NFKC", ch)
    if tag not in ("<sub>", "<super>") or len(base) != 1:
        return None
    if base in _GREEK or base.isascii() and (base.isalnum() or base in "+-=()"):
        return ("_" if tag == "<sub>" else "^"), _GREEK.get(base, base)
    return None


@dataclass
class _Piece:
    math: bool
    tex: str
    op_left: bool = False  # a formula that starts, or ends, with an operator or relation
    op_right: bool = False


def _join_math(a: str, b: str) -> str:  # "\\alpha" + "x" needs a space between
    return a + " " + b if _COMMAND_END.search(a) and b[:1].isalpha() else a + b


def _script_run(text: str, i: int) -> tuple[str, int]:
    """The run of sub- or superscripts starting at ``text[i]`` as ``_{..}`` or ``^{..}``."""
    mark, inner = "", ""
    while i < len(text) and (s := script_of(text[i])) and mark in ("", s[0]):
        mark, inner = s[0], _join_math(inner, s[1])
        i += 1
    return f"{mark}{{{inner}}}", i


def _math_of(text: str) -> str:
    """Symbolic text (see :data:`_SYMBOLIC`) as the body of a formula."""
    out, i = "", 0
    while i < len(text):
        if script_of(text[i]):
            script, i = _script_run(text, i)
            out += script
        else:
            out = _join_math(out, _MATH[text[i]][0] if text[i] in _MATH else text[i])
            i += 1
    return out


class Translator:
    """Turns Unicode text into LaTeX; remembers the characters it could not set."""

    def __init__(self) -> None:
        self.missing: dict[str, None] = {}

    def __call__(self, text: str) -> str:
        return "".join(f"${p.tex}$" if p.math else p.tex for p in _merge(self._pieces(text)))

    def _pieces(self, text: str) -> list[_Piece]:
        pieces: list[_Piece] = []
        i = 0
        while i < len(text):
            ch = text[i]
            start = i == 0 or not text[i - 1].isalpha()
            log = LOG_TERM.match(text, i) if start else None
            if log and all(c in _SYMBOLIC or script_of(c) for c in log.group(1)) and not (
                    _WORD_RUN.search(log.group(1))):
                pieces.append(_Piece(True, r"\ln(" + _math_of(log.group(1)) + ")"))
                i = log.end()
            elif script_of(ch):
                script, i = _script_run(text, i)
                _attach(pieces, script)
            elif ch in _MATH:
                tex, op = _MATH[ch]
                pieces.append(_Piece(True, tex, op, op))
                i += 1
            else:
                _add_text(pieces, self._text_char(text, i))
                i += 1
        return pieces

    def _text_char(self, text: str, i: int) -> str:
        ch = text[i]
        if ch in "'\"":
            opening = i == 0 or text[i - 1] in " ([{\u00a0\t\n"
            return ("`" if opening else "'") * (1 if ch == "'" else 2)
        if ch in _TEXT:
            return _TEXT[ch]
        if " " <= ch <= "~" or printable_letter(ch):
            return ch
        self.missing[ch] = None
        return "?"


def _attach(pieces: list[_Piece], script: str) -> None:
    """A sub- or superscript on the piece before it (whose last letter moves into math)."""
    last = pieces[-1] if pieces else None
    if last is not None and last.math:
        last.tex += script
        last.op_right = False
    elif last is not None and last.tex[-1:].isascii() and (last.tex[-1:].isalnum()
                                                            or last.tex[-1:] in ")]"):
        base, last.tex = last.tex[-1], last.tex[:-1]
        if not last.tex:
            pieces.pop()
        pieces.append(_Piece(True, base + script))
    else:
        pieces.append(_Piece(True, "{}" + script))


def _add_text(pieces: list[_Piece], tex: str) -> None:
    last = pieces[-1] if pieces else None
    if last is None or last.math:
        pieces.append(_Piece(False, tex))
        return
    prev = last.tex[-1:]
    # keep TeX from joining two characters into a ligature ("--", "''", "!`")
    if prev and ((prev in "-'`" and tex[:1] == prev) or (prev in "!?" and tex[:1] == "`")):
        last.tex += "{}"
    last.tex += tex


def _merge(pieces: list[_Piece]) -> list[_Piece]:
    """Adjacent formulas become one; so do formulas separated by spaces and ``+ = /`` when
    an operator stands between them.  An operator at a formula's edge next to a space
    keeps its spacing ("1 − α")."""
    out: list[_Piece] = []
    for q in pieces:
        p = _Piece(q.math, q.tex, q.op_left, q.op_right)
        gap = out[-1].tex if len(out) >= 2 and out[-2].math and not out[-1].math else None
        if (p.math and gap is not None and set(gap) <= set(" +=/")
                and (set(gap) & set("+=/") or out[-2].op_right or p.op_left)):
            out.pop()
        elif not (p.math and out and out[-1].math):
            out.append(p)
            continue
        out[-1].tex = _join_math(out[-1].tex + (gap or ""), p.tex)
        out[-1].op_right = p.op_right
    for k, p in enumerate(out):
        if not p.math or p.op_left and p.op_right:  # a lone operator: the spaces suffice
            continue
        if p.op_left and k and out[k - 1].tex.endswith(" "):
            p.tex = "{}" + p.tex
        if p.op_right and k + 1 < len(out) and out[k + 1].tex.startswith(" "):
            p.tex += "{}"
    return out


def tex_text(text: str) -> str:
    """Table text as LaTeX for an OT1 document with no extra package ('?' for characters
    it cannot set)."""
    return Translator()(text)
