"""Exact solving on FLINT multivariate polynomials: big symbolic circuits in a fraction of a second.

Why hand-written: SymPy's general solvers build and simplify expression trees at every step, and
FLINT (through python-flint's ``fmpz_mpoly``) has fast polynomial arithmetic and GCDs but no
linear solver over a polynomial ring. What is written here is only the glue:

* :class:`PolyField` turns SymPy expressions into fractions of integer polynomials (the circuit's
  symbols are the generators; pi and roots become extra generators) and back;
* :mod:`.fraction_free` solves the polynomial system: fraction-free (Bareiss) elimination with a
  sparsity-preserving pivot order and lazy row scaling, each unknown a ratio of two determinants
  (Cramer's rule);
* :func:`solve_system_fast` derives every current and ``[find]`` quantity in the same
  arithmetic and reduces each result once, by one polynomial GCD.

Results come out in the canonical form of :func:`nodeterm.engine.solving.forms.canonical`: numerator and
denominator coprime over the integers, the denominator's leading coefficient positive in lex order
of SymPy's own generator order (so the fraction is the one ``sympy.cancel`` gives), collected in s.
Small results are turned into SymPy expressions; a result with more than :func:`large_terms` terms
becomes a :class:`LargeExpr`, which prints straight from the polynomials and builds its SymPy
expression only when something asks for one.

Two guards keep big symbolic circuits usable. Denominators after the elimination share the system's
determinant, so sums of fractions divide it out exactly before taking a GCD (:meth:`PolyField.add`).
And work past :data:`TERM_LIMIT` polynomial terms is refused with :class:`ResultTooLarge`, which
says to substitute values, instead of filling the memory.

Without python-flint every caller falls back to the SymPy path in :mod:`.solve`, which gives the
same answers.
"""

from __future__ import annotations

import time

import sympy

from nodeterm.engine.symbols import as_expr
from sympy.polys.polyutils import _sort_gens

from nodeterm.engine.errors import SolveError
from nodeterm.engine.solving.fraction_free import TooManyTerms, cramer
from nodeterm.engine.symbols import I, V, param, s

try:  # a dependency, but keep the SymPy path working without it
    import flint
    from flint.utils.flint_exceptions import FlintError
except ImportError:  # pragma: no cover - exercised only where python-flint is missing
    flint = None
    FlintError = ArithmeticError


TERM_LIMIT = 5_000_000
"""Exact work holding more polynomial terms than this (the elimination, or the results in all) is
refused. The fully symbolic 12-section RC ladder's results hold 3.0 million terms (0.75 GB at peak,
113 MB of text when printed); the 13-section one's 8.4 million take 2.2 GB and print 350 MB. Past
this size an exact answer is too long to read or to print, and only substituting values makes it
useful."""


class ResultTooLarge(SolveError):
    """Exact work past :data:`TERM_LIMIT` terms: the circuit is fine, the algebra is too big."""


FACTOR_KNOWN_TERMS = 20_000
"""A known factor up to this long is factored once (FLINT: 0.1 s at 8,192 terms), so results reduce by
exact divisions (see PolyField.reduce); a longer one, such as the irreducible 75,025-term
determinant of a 12-section ladder (4 s to factor), reduces by GCDs."""

SLOW_GCDS, SLOW_GCD_SECONDS = 2, 0.01
"""The known factor is factored only after this many GCDs in :meth:`PolyField.reduce` took longer than
this: where the GCDs are quick (a ladder's determinant shares nothing with the numerators, and its
4,181 terms take 0.1 s to factor) factoring would only cost time."""

KNOWN_FACTOR_TERMS = 64
"""A determinant longer than this is kept as a known factor of later denominators (see PolyField.add)."""


def large_terms() -> int:
    """Results with more terms (numerator plus denominator) stay polynomials until asked for.

    The same limit as the canonical form's: above :data:`nodeterm.engine.solving.forms.FACTOR_LIMIT`
    terms a result is printed expanded and collected in s, which the polynomials do directly.
    """
    from nodeterm.engine.solving.forms import FACTOR_LIMIT
    return FACTOR_LIMIT


class Unsupported(Exception):
    """The expression has something the polynomial path does not model (floats, functions...)."""


class PolyField:
    """Fractions of integer polynomials in a fixed set of SymPy symbols.

    A fraction is a pair ``(num, den)`` of ``fmpz_mpoly``; operations do not reduce (one GCD at
    the end, in :meth:`reduce`).

    >>> R, C = sympy.symbols("R C")
    >>> F = PolyField([R, C, s])
    >>> F.expr(F.reduce(F.ev(1/(1 + 1/(s*R*C)))))
    C*R*s/(C*R*s + 1)
    """

    def __init__(self, symbols, atoms=()) -> None:
        if flint is None:
            raise Unsupported("python-flint is not installed")
        self.atoms = {a: sympy.Dummy("k") for a in atoms}
        gens = list(_sort_gens(list(set(symbols) | set(self.atoms.values()))))
        back = {d: a for a, d in self.atoms.items()}
        names = [sympy.sstr(back.get(g, g)) for g in gens]
        if len(set(names)) != len(names):
            raise Unsupported("two symbols share a name")
        self.symbols = gens
        self.names = names
        self.index = {g: i for i, g in enumerate(gens)}
        self.ctx = flint.fmpz_mpoly_ctx.get(tuple(names) or ("_",), "lex")
        self.gens = self.ctx.gens()
        self.one = self.ctx.constant(1)
        self.zero = self.ctx.constant(0)
        self.s_index = self.index.get(s)
        self._text_cache: list = []
        self.known_factors: list = []
        self._factors: dict = {}
        self._slow_gcds = 0
        self._contents: dict = {}
        self._quotients: dict = {}
        """Large polynomials that many denominators share (the system's determinant): see :meth:`add`."""

    def __reduce__(self):
        """Pickled as its generators and names (the FLINT context is rebuilt on loading), so a
        solution can cross a process boundary (the workbench solves in a child process)."""
        return _field_from_state, (self.symbols, self.names, self.atoms)

    # --- arithmetic on fractions -----------------------------------------------------
    def const(self, value) -> tuple:
        value = sympy.Rational(value)
        return self.ctx.constant(int(value.p)), self.ctx.constant(int(value.q))

    def add(self, a: tuple, b: tuple) -> tuple:
        (an, ad), (bn, bd) = a, b
        if an.is_zero():
            return b
        if bn.is_zero():
            return a
        if ad == bd:
            return an + bn, ad
        if ad.is_one():
            return an * bd + bn, bd
        if bd.is_one():
            return an + bn * ad, ad
        split = self._known_common(ad, bd)
        if split is not None:  # both are known_factor * small: only the small parts need a GCD
            adg, bdg = split
            return an * bdg + bn * adg, ad * bdg
        g = ad.gcd(bd)
        if g.is_one():
            return an * bd + bn * ad, ad * bd
        bdg = bd / g
        return an * bdg + bn * (ad / g), ad * bdg

    def _factored(self, f):
        """``(content, [(irreducible, multiplicity)])`` of a known factor, or None if too long to factor."""
        key = id(f)
        if key not in self._factors:
            self._factors[key] = f.factor() if len(f) <= FACTOR_KNOWN_TERMS else None
        return self._factors[key]

    def _reduce_by_known(self, num, den):
        """``num/den`` in lowest terms when ``den`` is a known factor times a small rest, else None.

        A GCD of two long polynomials costs tens of milliseconds each (a result of a 13-stage
        symbolic chain: 44 ms, 107 results). When the known factor's irreducible factors are at
        hand, each is divided out of ``num`` exactly as often as it goes, and only the rest of
        the denominator needs a GCD. Irreducible factors are primitive, so the integer content
        of the denominator is the factor's content times the rest's: the final GCD covers it.
        """
        for f in self.known_factors:
            if len(den) < len(f):
                continue
            factored = self._factored(f)
            if factored is None:
                continue
            try:
                rest = den / f
            except FlintError:
                continue
            content, parts = factored
            left = self.one  # the irreducible factors that stay in the denominator
            for p, mult in parts:
                for k in range(mult):
                    try:
                        num = num / p
                    except FlintError:
                        left = left * p ** (mult - k)
                        break
            small = rest * self.ctx.constant(int(content))
            g = num.gcd(small)
            if not g.is_one():
                num, small = num / g, small / g
            return num, left * small
        return None

    def _reduce_coprime_known(self, num, den):
        """``num/den`` in lowest terms when ``den`` is a known factor ``f`` (times a rest) and a cheap
        argument shows ``gcd(num, f) = 1``; else None.

        The argument: if ``num`` does not contain a variable x that ``f`` contains, every common
        factor of the two is free of x, so it divides the content of ``f`` in x (the GCD of
        ``f``'s coefficients as a polynomial in x). Hence ``gcd(num, f) = gcd(num, content_x(f))``,
        and that content is computed once per factor and variable (for a ladder's determinant a
        single monomial). With ``g = gcd(num, f)``, ``gcd(num, f*rest) = g*gcd(num/g, rest)``, and
        ``rest`` is small. A GCD against the whole 75,025-term determinant of a 12-section ladder costs 30 ms
        even for a two-term numerator; this costs well under a millisecond.
        """
        for f in self.known_factors:
            if den == f:
                rest = None
            elif len(den) >= len(f):
                try:
                    rest = den / f
                except FlintError:
                    continue
            else:
                continue
            g = self._gcd_by_content(num, f)
            if g is None:
                return None
            if not g.is_one():  # f/g is the same for many results: divided once
                key = (id(f), str(g))
                if key not in self._quotients:
                    self._quotients[key] = f / g
                num, f = num / g, self._quotients[key]
            if rest is None:
                return num, f
            # num = g*n', f = g*f' with n', f' coprime: gcd(num, f*rest) = g*gcd(n', rest)
            g = num.gcd(rest)
            if not g.is_one():
                num, rest = num / g, rest / g
            return num, (f if rest.is_one() else f * rest)
        return None

    def _gcd_by_content(self, num, f):
        """``gcd(num, f)`` through ``f``'s content in a variable that ``num`` lacks, or None."""
        known = self._contents.setdefault(id(f), (f, {}, f.degrees()))  # f kept alive: its id stays its own
        fdeg, ndeg = known[2], num.degrees()
        free = [i for i, (a, b) in enumerate(zip(fdeg, ndeg)) if a > 0 and b == 0]
        if not free:
            return None
        known = known[1]
        i = next((i for i in free if i in known), None)
        if i is None:
            i = min(free, key=lambda j: fdeg[j])
            content = None
            for _, q in self._groups(f, i):
                content = q if content is None else content.gcd(q)
                if content.is_one():
                    break
            known[i] = content
        content = known[i]
        return self.one if content.is_one() else num.gcd(content)

    def _known_common(self, ad, bd):
        """``(ad/g, bd/g)`` for ``g = gcd(ad, bd)`` when both are multiples of a known factor, else None.

        After the elimination every denominator is the shared determinant times a few small
        factors (parameters, s*C...). A GCD of two such denominators costs as much as the
        determinant is long (0.13 s at 65,536 terms); dividing the determinant out exactly and
        taking the GCD of what is left costs a few milliseconds.
        """
        for f in self.known_factors:
            if len(ad) < len(f) or len(bd) < len(f):
                continue
            try:
                qa, qb = ad / f, bd / f
            except FlintError:
                continue
            g = qa.gcd(qb)
            return (qa, qb) if g.is_one() else (qa / g, qb / g)
        return None

    def neg(self, a: tuple) -> tuple:
        return -a[0], a[1]

    def sub(self, a: tuple, b: tuple) -> tuple:
        return self.add(a, self.neg(b))

    def mul(self, a: tuple, b: tuple) -> tuple:
        (an, ad), (bn, bd) = a, b  # a factor 1 is skipped: a large polynomial times 1 is still a copy
        if len(ad) == 1 and an.is_one() and not ad.is_one() and len(bd) > KNOWN_FACTOR_TERMS:
            (an, ad), (bn, bd) = b, a
        if bn.is_one() and len(bd) == 1 and not bd.is_one() and len(ad) > KNOWN_FACTOR_TERMS:
            # x/R with x over the shared determinant: R usually divides x's numerator (a branch
            # current); dividing now spares multiplying the determinant by R and dividing it back
            try:
                return an / bd, ad
            except FlintError:
                pass
        num = bn if an.is_one() else an if bn.is_one() else an * bn
        den = bd if ad.is_one() else ad if bd.is_one() else ad * bd
        return num, den

    def inv(self, a: tuple) -> tuple:
        if a[0].is_zero():
            raise ZeroDivisionError("division by zero in a result")
        return a[1], a[0]

    def ev(self, expr, env: dict | None = None) -> tuple:
        """The fraction of a SymPy expression; symbols in ``env`` are replaced by their fractions."""
        env = env or {}
        cache: dict = {}

        def go(e):
            hit = cache.get(e)
            if hit is not None:
                return hit
            if e in env:
                out = env[e]
            elif e.is_Symbol:
                i = self.index.get(e)
                if i is None:
                    raise Unsupported(f"symbol {e} is not a generator")
                out = (self.gens[i], self.one)
            elif e.is_Rational:
                out = self.const(e)
            elif e.is_Add:
                out = (self.zero, self.one)
                for arg in e.args:
                    out = self.add(out, go(arg))
            elif e.is_Mul:
                out = (self.one, self.one)
                for arg in e.args:
                    out = self.mul(out, go(arg))
            elif e.is_Pow and e.exp.is_Integer and e not in self.atoms:
                base = go(e.base)
                k = int(e.exp)
                if k < 0:
                    base, k = self.inv(base), -k
                out = (base[0] ** k, base[1] ** k)
            elif e in self.atoms:
                i = self.index[self.atoms[e]]
                out = (self.gens[i], self.one)
            else:
                raise Unsupported(f"cannot treat {e} as a polynomial")
            cache[e] = out
            return out

        return go(as_expr(expr))

    def reduce(self, a: tuple) -> tuple:
        """Lowest terms over the integers, the denominator's leading coefficient positive."""
        num, den = a
        if num.is_zero():
            return self.zero, self.one
        if not den.is_one():
            split = self._reduce_coprime_known(num, den)
            if split is None and self._slow_gcds >= SLOW_GCDS:
                split = self._reduce_by_known(num, den)
            if split is not None:
                num, den = split
            else:
                start = time.perf_counter()
                g = num.gcd(den)
                if time.perf_counter() - start > SLOW_GCD_SECONDS:
                    self._slow_gcds += 1
                if not g.is_one():
                    num, den = num / g, den / g
            if den.leading_coefficient() < 0:
                num, den = -num, -den
        return num, den

    # --- back to SymPy --------------------------------------------------------------------
    def poly_expr(self, p) -> sympy.Expr:
        back = {d: a for a, d in self.atoms.items()}
        syms = [back.get(g, g) for g in self.symbols]
        terms = []
        for exps, c in p.to_dict().items():
            factors = [syms[i] ** e for i, e in enumerate(exps) if e]
            terms.append(sympy.Mul(sympy.Integer(int(c)), *factors))
        return sympy.Add(*terms)

    def _s_groups(self, p) -> list[tuple[int, object]]:
        """[(k, coefficient of s**k)] with the coefficients split off inside FLINT, k ascending."""
        return self._groups(p, self.s_index)

    def _groups(self, p, si) -> list[tuple[int, object]]:
        """[(k, coefficient of x**k)] for the generator of index ``si``, k ascending."""
        if si is None or p.degrees()[si] == 0:
            return [(0, p)]
        name, sgen = self.names[si], self.gens[si]
        groups = []
        k = 0
        while not p.is_zero():
            q = p.subs({name: 0})
            if not q.is_zero():
                groups.append((k, q))
                p = p - q
            p = p / sgen
            k += 1
        return groups

    def collected_expr(self, p) -> sympy.Expr:
        """``collect(expand(p), s)`` built directly, group by group."""
        pieces = []
        for k, q in self._s_groups(p):
            e = self.poly_expr(q)
            pieces.append(e if k == 0 else s**k * e)
        return sympy.Add(*pieces)

    def expr(self, a: tuple) -> sympy.Expr:
        """The canonical SymPy form of a reduced fraction (what ``canonical`` would give)."""
        from nodeterm.engine.solving.forms import FACTOR_LIMIT, canonical, tidy_fraction
        if not self.atoms and len(a[0]) + len(a[1]) > FACTOR_LIMIT:  # no factoring: collect in s
            num, den = self.collected_expr(a[0]), self.collected_expr(a[1])
            return num / den if den != 1 else num
        value = self.poly_expr(a[0]) / self.poly_expr(a[1])  # what sympy.cancel returns
        if self.atoms:  # radicals and pi: let SymPy decide the form
            return canonical(value)
        if value.is_Number:
            return value
        return tidy_fraction(*sympy.fraction(value))

    def result(self, a: tuple, reduced: bool = False):
        """A SymPy expression for a small result, a :class:`LargeExpr` for a large one.

        A large fraction is not even reduced here: :class:`LargeExpr` does it when first used.
        """
        if len(a[0]) + len(a[1]) > large_terms():
            return LargeExpr(self, a[0], a[1], reduced)
        if not reduced:
            a = self.reduce(a)
        return self.expr(a)

    def depends_on_s(self, a: tuple) -> bool:
        if self.s_index is None:
            return False
        return a[0].degrees()[self.s_index] > 0 or a[1].degrees()[self.s_index] > 0

    # --- text straight from the polynomials -----------------------------------------------
    def poly_text(self, p) -> str:
        """SymPy syntax of a polynomial, collected in s (terms grouped by the power of s).

        The coefficient of each power of s is split off inside FLINT (evaluate at s = 0, subtract,
        divide by s), so even a polynomial of 100,000 terms is printed at C speed.
        """
        cache = self._text_cache  # results share their denominator: print it once
        for i, (q, text) in enumerate(cache):
            if q == p:
                cache.append(cache.pop(i))  # most recently used last: a shared denominator stays
                return text
        if len(p) > 1000:  # a coefficient of s of a polynomial printed before (a transfer function's)
            groups = self.__dict__.setdefault("_group_texts", {})
            for q, text in groups.get(len(p), ()):
                if q == p:
                    return text
        text = self._poly_text(p)
        if len(p) > 1000:
            self._text_cache = (cache + [(p, text)])[-4:]
        return text

    def _poly_text(self, p) -> str:
        si = self.s_index
        if si is None or p.degrees()[si] <= 0:
            return _flint_text(p)
        groups = self._s_groups(p)
        pieces = []
        known = self.__dict__.setdefault("_group_texts", {})
        for k, q in reversed(groups):
            text = _flint_text(q)
            if len(q) > 1000 and len(known) < 256:
                known.setdefault(len(q), []).append((q, text))
            if k == 0:
                pieces.append(text)
                continue
            sk = "s" if k == 1 else f"s**{k}"
            if text == "1":
                pieces.append(sk)
            elif text == "-1":
                pieces.append("-" + sk)
            elif len(q) == 1:
                pieces.append(f"{text}*{sk}")
            else:
                pieces.append(f"{sk}*({text})")
        out = pieces[0]
        for piece in pieces[1:]:
            out += " - " + piece[1:] if piece.startswith("-") else " + " + piece
        return out

    def text(self, a: tuple) -> str:
        """One-line SymPy-syntax text of a reduced fraction."""
        num, den = a
        nt = self.poly_text(num)
        if den.is_one():
            return nt
        dt = self.poly_text(den)
        if len(num) > 1:
            nt = f"({nt})"
        if len(den) > 1 or "*" in dt:
            dt = f"({dt})"
        return f"{nt}/{dt}"


    # --- LaTeX straight from the polynomials ------------------------------------------------
    def latex(self, a: tuple, printer) -> str:
        """LaTeX of a reduced fraction (``\\frac``, numerator and denominator collected in s).

        FLINT prints each coefficient of a power of s (C speed); one regular-expression pass turns
        its names into the printer's symbols (``C1`` -> ``C_{1}``), ``^k`` into ``^{k}`` and ``*``
        into a thin space, so a result of 100,000 terms takes a fraction of a second.
        """
        num, den = a
        nt = self._poly_latex(num, printer)
        if den.is_one():
            return nt
        return rf"\frac{{{nt}}}{{{self._poly_latex(den, printer)}}}"

    def _poly_latex(self, p, printer) -> str:
        cache = self.__dict__.setdefault("_latex_cache", [])
        for i, (q, key, known) in enumerate(cache):  # results share their denominator: print it once
            if q == p and key == self._latex_key(printer):
                cache.append(cache.pop(i))  # most recently used last: a shared denominator stays
                return known
        text = self._poly_latex_new(p, printer)
        if len(p) > 1000:
            self._latex_cache = (cache + [(p, self._latex_key(printer), text)])[-4:]
        return text

    def _latex_key(self, printer) -> tuple:
        """The printer's names of the generators (the LaTeX cache is valid for these names only)."""
        names = self.__dict__.get("_latex_names")
        if names is None or names[0] is not printer:
            self._latex_table(printer)
            names = self._latex_names
        return tuple(names[1].values())

    def _latex_table(self, printer) -> None:
        import re
        back = {d: a for a, d in self.atoms.items()}
        table = {n: printer._print(back.get(g, g)) for n, g in zip(self.names, self.symbols)}
        latex_names = tuple(table[n] for n in self.names)
        # The same polynomials under LaTeX names: FLINT then prints C_{1}*R_{1}^2 directly.
        lctx = (flint.fmpz_mpoly_ctx.get(latex_names or ("_",), "lex")
                if len(set(latex_names)) == len(latex_names) else None)
        self._latex_names = (printer, table, lctx, re.compile(r"\^(\d+)"),
                             re.compile(r"[A-Za-z_][A-Za-z0-9_]*"))

    def _poly_latex_new(self, p, printer) -> str:
        names = self.__dict__.get("_latex_names")
        if names is None or names[0] is not printer:
            self._latex_table(printer)
            names = self._latex_names
        _, table, lctx, power, word = names

        def conv(q) -> str:
            if lctx is not None:
                text = str(q.compose(*lctx.gens(), ctx=lctx)) if self.names else str(q)
            else:  # two names print alike in LaTeX: rename word by word
                text = word.sub(lambda m: table.get(m.group(0), m.group(0)), str(q))
            text = power.sub(r"^{\1}", text.replace("*", " "))
            return "- " + text[1:] if text.startswith("-") else text  # SymPy's LaTeX: "- x"

        si = self.s_index
        sname = table.get(self.names[si], "s") if si is not None else "s"
        groups = self._s_groups(p) if si is not None and not p.is_zero() else [(0, p)]
        pieces = []
        for k, q in reversed(groups):
            text = conv(q)
            if k == 0:
                pieces.append(text)
                continue
            sk = sname if k == 1 else f"{sname}^{{{k}}}"
            if text == "1":
                pieces.append(sk)
            elif text == "- 1":
                pieces.append("- " + sk)
            elif len(q) == 1:
                pieces.append(f"{text} {sk}")
            else:
                pieces.append(rf"{sk} \left({text}\right)")
        out = pieces[0]
        for piece in pieces[1:]:
            out += " - " + piece[2:] if piece.startswith("- ") else " + " + piece
        return out


def _field_from_state(symbols, names, atoms) -> PolyField:
    field = PolyField.__new__(PolyField)
    field.atoms, field.symbols, field.names = atoms, list(symbols), list(names)
    field.index = {g: i for i, g in enumerate(field.symbols)}
    field.ctx = flint.fmpz_mpoly_ctx.get(tuple(names) or ("_",), "lex")
    field.gens = field.ctx.gens()
    field.one, field.zero = field.ctx.constant(1), field.ctx.constant(0)
    field.s_index = field.index.get(s)
    field._text_cache = []
    field.known_factors, field._factors, field._slow_gcds = [], {}, 0
    field._contents, field._quotients = {}, {}
    return field


def _large_from_state(field, num: dict, den: dict, reduced: bool, text, expr) -> "LargeExpr":
    out = LargeExpr(field, field.ctx.from_dict(num), field.ctx.from_dict(den), reduced)
    out._text, out._expr = text, expr
    return out


def _flint_text(p) -> str:
    return str(p).replace("^", "**")


class LargeExpr:
    """A large exact result kept as polynomials: prints at once, becomes SymPy on demand.

    It stands in for a SymPy expression in :class:`~.solution.Solution`: ``str`` and SymPy's
    printers give its canonical text (numerator and denominator collected in s), and ``as_expr(x)``
    (SymPy's ``_sympy_`` hook) or any SymPy attribute (``x.subs``, ``x.free_symbols``...) builds
    and caches the real expression. Arithmetic delegates to that expression.
    """

    is_large = True
    is_number = False
    is_Number = False

    def __init__(self, field: PolyField, num, den, reduced: bool = False) -> None:
        self._field = field
        self._frac = (num, den)
        self._reduced = reduced
        self._text: str | None = None
        self._expr = None

    @property
    def fraction(self) -> tuple:
        """(numerator, denominator) as ``fmpz_mpoly``, in lowest terms."""
        if not self._reduced:
            self._frac = self._field.reduce(self._frac)
            self._reduced = True
        return self._frac

    @property
    def text(self) -> str:
        """The canonical one-line text (identical to ``sympy.sstr`` of the expression)."""
        if self._text is None:
            num, den = self.fraction
            if len(num) + len(den) <= large_terms():  # small after all: SymPy's factored form
                self._text = sympy.sstr(self._sympy_(), order="none")
            else:
                self._text = self._field.text(self.fraction)
        return self._text

    @property
    def terms(self) -> int:
        """Number of terms in numerator plus denominator."""
        return len(self.fraction[0]) + len(self.fraction[1])

    def depends_on_s(self) -> bool:
        return self._field.depends_on_s(self.fraction)

    def __reduce__(self):
        """Pickled in lowest terms as coefficient dictionaries, with the text and expression if made."""
        num, den = self.fraction
        return _large_from_state, (self._field, num.to_dict(), den.to_dict(), True, self._text, self._expr)

    def _sympy_(self) -> sympy.Expr:
        if self._expr is None:
            self._expr = self._field.expr(self.fraction)
        return self._expr

    def _sympystr(self, printer) -> str:
        return self.text

    def _latex(self, printer) -> str:
        num, den = self.fraction
        if len(num) + len(den) <= large_terms():  # small after all: SymPy's factored form
            return printer._print(self._sympy_())
        return self._field.latex(self.fraction, printer)

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return self.text

    def __getattr__(self, name):
        if name.startswith("_"):
            raise AttributeError(name)
        return getattr(self._sympy_(), name)

    def __eq__(self, other) -> bool:
        if isinstance(other, LargeExpr) and self._field is other._field:
            return self.fraction == other.fraction
        return self._sympy_() == other

    def __hash__(self) -> int:
        return hash(self._sympy_())

    def __neg__(self):
        return -self._sympy_()

    def __add__(self, o):
        return self._sympy_() + o

    def __radd__(self, o):
        return o + self._sympy_()

    def __sub__(self, o):
        return self._sympy_() - o

    def __rsub__(self, o):
        return o - self._sympy_()

    def __mul__(self, o):
        return self._sympy_() * o

    def __rmul__(self, o):
        return o * self._sympy_()

    def __truediv__(self, o):
        return self._sympy_() / o

    def __rtruediv__(self, o):
        return o / self._sympy_()

    def __pow__(self, o):
        return self._sympy_() ** o


def _symbols_and_atoms(exprs) -> tuple[set, set]:
    syms: set = set()
    atoms: set = set()
    for e in exprs:
        e = as_expr(e)
        if e.has(sympy.Float):
            raise Unsupported("floating-point numbers")
        syms |= e.free_symbols
        atoms |= {a for a in e.atoms(sympy.Pow) if a.exp.is_Rational and not a.exp.is_Integer and a.base.is_number}
        atoms |= set(e.atoms(sympy.NumberSymbol))
    return syms, atoms


def cleared_row(field: PolyField, entries: dict) -> tuple[dict, object]:
    """A row of fractions (column -> (num, den)) times the lcm of its denominators: (polynomial row, lcm)."""
    den = field.one
    for _, d in entries.values():
        if not d.is_one():
            g = den.gcd(d)
            den = den * (d / g) if not g.is_one() else den * d
    return {j: nd[0] * (den / nd[1]) for j, nd in entries.items() if not nd[0].is_zero()}, den


def solve_fractions(field: PolyField, A: sympy.Matrix, b: sympy.Matrix):
    """Solve A x = b in ``field``: a list of unreduced fractions sharing one denominator, or None."""
    n = A.shape[1]
    rows = []
    for i in range(A.shape[0]):
        entries = {}
        for j in range(n):
            if A[i, j] != 0:
                entries[j] = field.ev(A[i, j])
        if b[i, 0] != 0:
            entries[n] = field.ev(b[i, 0])
        rows.append(cleared_row(field, entries)[0])
    out = cramer(rows, n, field.one, TERM_LIMIT)
    if out is None:
        return None
    X, D = out
    if len(D) > KNOWN_FACTOR_TERMS:
        field.known_factors.append(D)
    return [(x, D) for x in X]


def solve_linear_fast(A: sympy.Matrix, b: sympy.Matrix) -> list | None:
    """:func:`nodeterm.engine.solving.solve.solve_linear` on FLINT polynomials (same answers).

    >>> x, y = sympy.symbols("x y")
    >>> solve_linear_fast(sympy.Matrix([[x, 1], [1, -1]]), sympy.Matrix([1, 0]))
    [1/(x + 1), 1/(x + 1)]
    """
    syms, atoms = _symbols_and_atoms(list(A) + list(b))
    field = PolyField(syms, atoms)
    try:
        sol = solve_fractions(field, A, b)
    except TooManyTerms as exc:
        raise ResultTooLarge(f"the exact answer is too large: {exc.terms:,} polynomial terms (the limit is "
                         f"{TERM_LIMIT:,})", hint="substitute values for some parameters") from None
    if sol is None:
        return None
    return [field.expr(field.reduce(x)) for x in sol]


class _Held:
    """Counts the terms of the results kept so far; past :data:`TERM_LIMIT` the solve is refused.

    Counted as they are made, so a circuit whose currents would fill the memory is refused early.
    """

    def __init__(self, system, syms) -> None:
        self.system, self.syms, self.terms = system, syms, 0

    def charge(self, frac: tuple) -> tuple:
        self.terms += len(frac[0]) + len(frac[1])
        if self.terms > TERM_LIMIT:
            raise too_large(self.system, self.syms, self.terms, "the voltages, currents and [find] results")
        return frac


def too_large(system, syms, terms: int, what: str) -> SolveError:
    """The error for exact work past :data:`TERM_LIMIT` terms, with what to do instead."""
    circuit = system.circuit
    unknowns = {V(n) for n in circuit.nodes} | {I(p.id) for p in circuit.parts} | {s}
    names = sorted((str(x) for x in syms if x not in unknowns), key=lambda n: (len(n), n))
    shown = ", ".join(names[:6]) + (", ..." if len(names) > 6 else "")
    return ResultTooLarge(
        f"the exact answer is too large: {what} would hold over {terms:,} polynomial terms (the limit is "
        f"{TERM_LIMIT:,}) with {len(names)} parameter(s) as symbols ({shown})",
        hint="substitute values for the parameters you are not studying (--set NAME=VALUE, or --known "
             "for every value in the file; v or k in the workbench), or solve in double precision with --numeric",
        file=system.circuit.path)


def solve_system_fast(system):
    """Solve a System and derive every quantity on FLINT polynomials.

    Mirrors :func:`nodeterm.engine.solving.solve.solve_system` step for step (same results), but
    keeps every quantity as a fraction over the shared determinant until one final GCD.

    Raises:
        Unsupported: when something is outside the polynomial path (the caller falls back).
        SolveError: when the equations are singular.
    """
    from nodeterm.engine.equations.procedure import _Context
    from nodeterm.engine.solving.solution import Solution, diagnose_singular, peel_order

    circuit = system.circuit
    m = system.matrix()
    if len(m.rows) != len(m.cols):
        raise diagnose_singular(system, m)
    ctx = _Context(circuit, set(system.needed))
    ref = circuit.reference
    parts_exprs = []
    for p in circuit.parts:
        if p.branch(ref) is None:
            parts_exprs.append(p.current(ctx, None))
            parts_exprs += [cur for _, cur in p.kcl_terms(ctx)]
    pvals = {param(n): v for n, v in system.values.items()}
    exprs = (list(m.A) + list(m.b) + list(system.eliminated.values()) + parts_exprs
             + list(pvals.values()) + [f.expr for f in circuit.find.values()])
    syms, atoms = _symbols_and_atoms(exprs)
    field = PolyField(syms | {s}, atoms)
    try:
        sol = solve_fractions(field, m.A, m.b)
    except TooManyTerms as exc:
        raise too_large(system, syms, exc.terms, "the elimination") from None
    if sol is None:
        raise diagnose_singular(system, m)
    held = _Held(system, syms)
    for frac in sol:
        held.charge(frac)
    values = dict(zip(system.reduced_unknowns, sol))
    for sym, expr in system.eliminated.items():
        values[sym] = field.ev(expr, values)
    voltages = {ref: (field.zero, field.one)}
    for n in circuit.nodes:
        if n != ref:
            voltages[n] = values[V(n)]
    env = {**{V(n): v for n, v in voltages.items() if n != ref}, **values}
    penv = {k: field.ev(v, env) for k, v in pvals.items()}
    env_all = {**env, **penv}

    currents: dict[str, tuple] = {}
    # Currents leaving each node, summed only where the source peel below needs them (sums of
    # fractions with different denominators cost a GCD each).
    leaving_terms: dict[str, list[tuple]] = {n: [] for n in circuit.nodes}
    unresolved: dict[str, tuple[str, str]] = {}
    kcl_parts = []
    for p in circuit.parts:
        br = p.branch(ref)
        if br is None:
            currents[p.id] = held.charge(field.ev(p.current(ctx, None), env_all))
            kcl_parts.append(p)
        elif p.id in system.needed:
            x = values[I(p.id)]
            currents[p.id] = x
            leaving_terms[br[0]].append(x)
            leaving_terms[br[1]].append(field.neg(x))
        else:
            unresolved[p.id] = br
    if unresolved:
        for p in kcl_parts:
            for node, cur in p.kcl_terms(ctx):
                leaving_terms[node].append(field.ev(cur, env_all))

    def leaving(node: str) -> tuple:
        total = (field.zero, field.one)
        for term in leaving_terms[node]:
            total = field.add(total, term)
        leaving_terms[node] = [total]
        return total

    for pid, node, a, b in peel_order(circuit.nodes, ref, unresolved):  # as solve_system
        x = field.neg(leaving(node)) if node == a else leaving(node)
        currents[pid] = held.charge(x)
        leaving_terms[a].append(x)
        leaving_terms[b].append(field.neg(x))
    if unresolved:
        raise Unsupported("source currents not determined")
    cenv = {I(pid): v for pid, v in currents.items()}
    try:
        find = {name: field.ev(item.expr, {**env, **cenv, **penv}) for name, item in circuit.find.items()}
    except ZeroDivisionError:
        raise Unsupported("a [find] quantity divides by zero") from None

    for value in find.values():
        held.charge(value)
    results = {}
    for group, mapping in (("v", voltages), ("i", {p.id: currents[p.id] for p in circuit.parts}), ("f", find)):
        results[group] = {k: field.result(frac) for k, frac in mapping.items()}
    reactive = False
    for group in results.values():  # a large result is reduced only if it might depend on s
        for k, value in group.items():
            if isinstance(value, LargeExpr):
                num, den = value._frac
                dep = field.depends_on_s((num, den)) and value.depends_on_s()
            else:
                dep = value.has(s)
            if dep:
                reactive = True
                break
        if reactive:
            break
    return Solution(results["v"], results["i"], results["f"], reactive, dict(system.values))
