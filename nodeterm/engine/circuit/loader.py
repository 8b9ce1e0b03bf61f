"""Load a circuit file (TOML) into a validated :class:`~.model.Circuit`.

TOML itself is read by the standard library's ``tomllib``. It gives no line
numbers, so :class:`.file_lines._Lines` finds the line of each table and key by
a light scan of the text: enough to point the user at the offending line.
:class:`.size_limits._SizeLimits` refuses values that would blow up.
"""

from __future__ import annotations

import difflib
import math
import re
try:  # the compiled build of the same parser (tomllib's upstream): ~2.5x faster on big circuit files
    import tomli as tomllib
except ImportError:  # pragma: no cover
    import tomllib
from pathlib import Path

import sympy

from nodeterm.engine.errors import InputError, Warning, did_you_mean
from nodeterm.engine.circuit.expr import MAX_LITERAL_DIGITS, ExpressionError, parse_expression
from nodeterm.engine.circuit.file_lines import _Lines
from nodeterm.engine.circuit.model import Circuit, FindItem, HandItem, Parameter
from nodeterm.engine.circuit.parts import KINDS, Part, suggest_kind
from nodeterm.engine.circuit.size_limits import _SizeLimits
from nodeterm.engine.circuit.units import EXPECTED, UNSTATED, Dim, dimension, mismatch
from nodeterm.engine.symbols import I, V, param, s

MAX_FILE_BYTES = 5_000_000
MAX_PARTS = 20_000

NODE_RE = re.compile(r"^[A-Za-z0-9_]+$")
ID_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
TOP_KEYS = ("title", "reference", "parameters", "parts", "find", "hand")
RESERVED = {"s", "pi", "sqrt"}


class _Loader:
    def __init__(self, text: str, filename: str) -> None:
        self.text = text
        self.file = filename
        self.where = _Lines(text)
        self.limits = _SizeLimits(self.error)
        self.warnings: list[Warning] = []
        self._parsed: dict = {}  # (text, resolver) -> expression: big circuits repeat their values
        self._good_nodes: set = set()  # node names already checked

    def error(self, message: str, hint: str = "", line: int | None = None,
              column: int | None = None) -> InputError:
        return InputError(message, hint=hint, file=self.file, line=line, column=column)

    # --- values ---------------------------------------------------------
    def expression(self, raw: object, *, what: str, table: str, key: str, field: str | None,
                   resolve) -> sympy.Expr:
        if type(raw) is str:  # the usual case, and parts share values: parsed once per text
            cached = self._parsed.get((raw, resolve))
            if cached is not None:
                return cached
        line = self.where.key(table, key)
        if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
            raise self.error(f"{what} must be a number or an expression in quotes, not {_toml_type(raw)}",
                             hint='write e.g. value = "10k"', line=line)
        if isinstance(raw, float):
            if not math.isfinite(raw):
                raise self.error(f"{what} is {raw}, which is not a finite number",
                                 hint="give a finite value", line=line)
            return sympy.Rational(repr(raw))
        if isinstance(raw, int):
            if abs(raw) >= 10**MAX_LITERAL_DIGITS:
                raise self.error(f"{what} is an integer of more than {MAX_LITERAL_DIGITS} digits",
                                 hint="write it with an exponent or an SI prefix, e.g. \"4.7e12\"", line=line)
            return sympy.Integer(raw)
        cached = self._parsed.get((raw, resolve))
        if cached is not None:
            return cached
        try:
            value = parse_expression(raw, resolve)
            self._parsed[(raw, resolve)] = value
            return value
        except ExpressionError as err:
            base = self.where.column_of(line, raw, after=field or "")
            column = base + err.column - 1 if base is not None and err.column else None
            hint = err.hint
            if err.message.startswith("unknown name"):
                hint = {"parameters": "a parameter value may use other parameters of [parameters] only",
                        "parts": "define it in [parameters] (NAME = \"value\", or \"\" for a symbol); "
                                 "part values may use parameters and s, not V_ or I_ names",
                        }.get(table, hint)
                name = err.message.split("'")[1] if "'" in err.message else ""
                names = list(getattr(self, "param_names", ()))
                if table == "find":  # a quantity: also V_<node>, I_<part>
                    names += list(getattr(self, "quantity_names", ()))
                hint = did_you_mean(name, names) + hint
            raise self.error(f"{what}: {err.message} in {raw!r}", hint=hint, line=line,
                             column=column) from None

    # --- top level --------------------------------------------------------
    def load(self) -> Circuit:
        try:
            data = tomllib.loads(self.text)
        except tomllib.TOMLDecodeError as err:
            msg = str(err)
            m = re.search(r"\(at line (\d+), column (\d+)\)", msg)
            line = int(m.group(1)) if m else None
            column = int(m.group(2)) if m else None
            what = re.sub(r"\s*\(at line \d+, column \d+\)", "", msg) or "invalid TOML"
            if msg.startswith(("Cannot overwrite", "Cannot declare")) and self.where.repeated:
                raise self.repeated_error() from None
            raise self.error(f"TOML syntax error: {what}",
                             hint="circuit files are TOML 1.0: key = value, strings in double quotes, "
                                  "one part per line as an inline table { ... }",
                             line=line, column=column) from None
        except RecursionError:
            raise self.error("TOML nesting is too deep",
                             hint="circuit files need no nested arrays or tables; remove the nesting",
                             line=None) from None
        except ValueError:  # an integer with more digits than Python converts (4300)
            m = re.search(r"\d{%d}" % (MAX_LITERAL_DIGITS + 1), self.text)
            raise self.error(f"a number has more than {MAX_LITERAL_DIGITS} digits",
                             hint="write it with an exponent or an SI prefix, e.g. \"4.7e12\"",
                             line=self.text.count("\n", 0, m.start()) + 1 if m else None) from None
        for key in data:
            if key not in TOP_KEYS:
                raise self.error(f"unknown top-level key {key!r}",
                                 hint="allowed: " + ", ".join(TOP_KEYS),
                                 line=self.where.tables.get(key) or self.where.key("", key))
        title = data.get("title", "")
        if not isinstance(title, str):
            raise self.error("title must be a string", line=self.where.key("", "title"))
        reference = data.get("reference", "gnd")
        if not isinstance(reference, str) or not NODE_RE.match(reference):
            raise self.error(f"reference {reference!r} is not a valid node name",
                             hint="node names use letters, digits and _", line=self.where.key("", "reference"))
        for table in ("parameters", "parts", "find", "hand"):
            if table in data and not isinstance(data[table], dict):
                raise self.error(f"{table} must be a table", hint=f"write [{table}] on its own line",
                                 line=self.where.key("", table))
        if "parts" not in data:
            raise self.error("missing [parts] table",
                             hint='add [parts] with one line per part, e.g. '
                                  'R1 = { kind = "resistor", nodes = ["in", "out"], value = "10k" }',
                             line=1)
        parameters = self.parameters(data.get("parameters", {}))
        parts = self.parts(data["parts"], parameters, reference)
        nodes = self.nodes(parts, reference)
        find = self.find(data.get("find", {}), parameters, nodes, parts)
        hand = self.hand(data.get("hand", {}))
        return Circuit(title=title, reference=reference, nodes=nodes, parts=tuple(parts),
                       parameters=parameters, find=find, hand=hand, path=self.file,
                       warnings=tuple(self.warnings), source_text=self.text)

    def repeated_error(self) -> InputError:
        """A name or table written twice, with both lines (TOML only says it 'cannot overwrite a value')."""
        table, key, first, again = self.where.repeated[0]
        column = len(self.where.lines[again - 1]) - len(self.where.lines[again - 1].lstrip()) + 1
        if not key:
            return self.error(f"table [{table}] is written twice, on lines {first} and {again}",
                              hint=f"put everything of [{table}] under one [{table}] header", line=again,
                              column=column)
        what = {"parts": f"part {key}", "parameters": f"parameter {key}", "find": f"[find] {key}",
                "hand": f"[hand] {key}", "": f"top-level key {key}"}.get(table, f"{key} in [{table}]")
        hint = ({"parts": "give each part its own id (e.g. the next free number) or delete one of the lines"}
                .get(table, "keep one of the two lines"))
        return self.error(f"{what} is defined twice, on lines {first} and {again}", hint=hint, line=again,
                          column=column)

    # --- parameters -------------------------------------------------------
    def parameters(self, table: dict) -> dict[str, Parameter]:
        names = list(table)
        self.param_names = tuple(names)
        for name in names:
            line = self.where.key("parameters", name)
            if not ID_RE.match(name):
                raise self.error(f"parameter name {name!r} is not valid",
                                 hint="names start with a letter and use letters, digits and _", line=line)
            if name in RESERVED or name.startswith(("V_", "I_")):
                raise self.error(f"parameter name {name!r} is reserved",
                                 hint="s, pi, sqrt and names starting with V_ or I_ mean something else; rename it",
                                 line=line)

        def resolve(n: str):
            return param(n) if n in table else None

        result: dict[str, Parameter] = {}
        for name, raw in table.items():
            line = self.where.key("parameters", name)
            tolerance = None
            distribution = "uniform"
            if isinstance(raw, dict):
                unknown = set(raw) - {"value", "tolerance", "distribution"}
                if unknown or "value" not in raw:
                    raise self.error(f"parameter {name}: a table takes the keys value, tolerance, distribution",
                                     hint='write e.g. R1 = { value = "10k", tolerance = "1%" }', line=line)
                tolerance = self.tolerance(raw.get("tolerance"), name, line)
                distribution = raw.get("distribution", "uniform")
                if distribution not in ("uniform", "normal"):
                    raise self.error(f"parameter {name}: distribution must be \"uniform\" or \"normal\"",
                                     line=line)
                raw = raw["value"]
            if raw == "":
                value = None
            else:
                value = self.expression(raw, what=f"parameter {name}", table="parameters", key=name,
                                        field=None, resolve=resolve)
            text = raw if isinstance(raw, str) else str(raw)
            result[name] = Parameter(name, value, line, tolerance, text, distribution)
        self.check_cycles(result)
        self.limits.check_parameters(result)
        self.param_dims = self.parameter_dimensions(table, result)
        return result

    def parameter_dimensions(self, table: dict, params: dict[str, Parameter]) -> dict[str, Dim]:
        """The unit each parameter's value states (units.py), in dependency order (cycles are refused already)."""
        dims: dict[str, Dim] = {}

        def dim(name: str) -> Dim:
            if name in dims:
                return dims[name]
            p = params[name]
            raw = table[name]["value"] if isinstance(table[name], dict) else table[name]
            if p.value is None:
                dims[name] = UNSTATED
                return UNSTATED
            deps = {str(x) for x in p.value.free_symbols if str(x) in params}
            names = {d: dim(d) for d in sorted(deps)}
            found = self.dimension_of(raw, names, table="parameters", key=name, field=None,
                                      what=f"parameter {name}")
            # a parameter written as a plain number has no stated unit (Span = "16m" may be A/V)
            dims[name] = UNSTATED if found.status == "pure" else found
            return dims[name]

        for name in params:
            dim(name)
        return dims

    def dimension_of(self, raw: object, names: dict, *, table: str, key: str, field: str | None, what: str) -> Dim:
        try:
            return dimension(raw, names)
        except ExpressionError as err:
            line = self.where.key(table, key)
            base = self.where.column_of(line, raw, after=field or "") if isinstance(raw, str) else None
            column = base + err.column - 1 if base is not None and err.column else None
            raise self.error(f"{what}: {err.message} in {raw!r}", hint=err.hint, line=line, column=column) from None

    def check_unit(self, kind: str, key: str, raw: object, pid: str, field: str) -> None:
        """Refuse a value whose stated unit does not fit what it sets (a resistor value in F...)."""
        if not isinstance(raw, str):
            return
        dims = getattr(self, "param_dims", {})
        cache = self.__dict__.setdefault("_part_dims", {})  # parts share values: each text walked once
        dim = cache.get(raw)
        if dim is None:
            dim = self.dimension_of(raw, dims, table="parts", key=pid, field=field, what=f"part {pid} {key}")
            cache[raw] = dim
        wrong = mismatch(kind, key, dim)
        if wrong:
            line = self.where.key("parts", pid)
            via = [n for n in re.findall(r"[A-Za-z_][A-Za-z0-9_]*", raw) if dims.get(n, UNSTATED).status == "stated"]
            hint = (f"check the unit of parameter {via[0]}" if via else
                    f"write the {key} of {pid} in {Dim('stated', EXPECTED[(kind, key)]).text}"
                    " (or leave the unit out)")
            raise self.error(f"part {pid} {key} {raw!r} {wrong}", hint=hint, line=line,
                             column=self.where.column_of(line, raw, after=field))

    def tolerance(self, raw: object, name: str, line: int | None) -> sympy.Expr | None:
        if raw is None:
            return None
        text = raw if isinstance(raw, str) else None
        try:
            if isinstance(raw, bool):
                raise ValueError
            if isinstance(raw, (int, float)):
                value = sympy.Rational(repr(raw)) if isinstance(raw, float) else sympy.Integer(raw)
            elif text is not None and text.strip().endswith("%"):
                value = parse_expression(text.strip()[:-1]) / 100
            elif text is not None:
                value = parse_expression(text)
            else:
                raise ValueError
        except (ExpressionError, ValueError):
            raise self.error(f"parameter {name}: tolerance {raw!r} is not a number",
                             hint='write e.g. tolerance = "1%" or tolerance = 0.01', line=line) from None
        if not value.is_Number or value < 0:
            raise self.error(f"parameter {name}: tolerance {raw!r} is negative",
                             hint="a tolerance is a positive fraction such as 1% or 0.05", line=line)
        if value > 1:
            raise self.error(f"parameter {name}: tolerance {raw!r} is above 100%",
                             hint="a tolerance is a fraction of the value, at most 100%", line=line)
        return value

    def check_cycles(self, params: dict[str, Parameter]) -> None:
        deps = {n: {str(x) for x in p.value.free_symbols} if p.value is not None else set()
                for n, p in params.items()}
        state: dict[str, int] = {}

        def visit(n: str, path: list[str]) -> None:
            state[n] = 1
            for d in sorted(deps[n]):
                if d not in deps:
                    continue
                if state.get(d) == 1:
                    cycle = path[path.index(d):] + [d] if d in path else [n, d]
                    raise self.error("parameter cycle: " + " -> ".join(cycle),
                                     hint="give one of these parameters a plain value",
                                     line=params[d].line)
                if state.get(d) is None:
                    visit(d, path + [d])
            state[n] = 2

        for n in params:
            if n not in state:
                visit(n, [n])

    # --- parts --------------------------------------------------------------
    def parts(self, table: dict, parameters: dict[str, Parameter], reference: str) -> list[Part]:
        if not table:
            raise self.error("[parts] is empty", hint="add at least one part",
                             line=self.where.tables.get("parts"))
        if len(table) > MAX_PARTS:
            raise self.error(f"{len(table)} parts is more than the limit of {MAX_PARTS}",
                             hint="split the circuit", line=self.where.tables.get("parts"))

        def resolve_value(n: str):
            if n in parameters:
                return param(n)
            if n == "s":
                return s
            return None

        parts: list[Part] = []
        for pid, raw in table.items():
            line = self.where.key("parts", pid)
            if not ID_RE.match(pid):
                raise self.error(f"part id {pid!r} is not valid",
                                 hint="ids start with a letter and use letters, digits and _", line=line)
            if not isinstance(raw, dict):
                raise self.error(f"part {pid} must be an inline table",
                                 hint=f'write {pid} = {{ kind = "resistor", nodes = ["a", "b"], value = "1k" }}',
                                 line=line)
            kind = raw.get("kind")
            if not isinstance(kind, str) or kind not in KINDS:  # kind = [] is not hashable
                raise self.error(f"part {pid}: unknown kind {kind!r}" if kind is not None
                                 else f"part {pid} has no kind",
                                 hint=(f"did you mean {suggest_kind(kind)!r}? " if suggest_kind(kind) else "")
                                 + "kinds: " + ", ".join(KINDS), line=line,
                                 column=self.where.column_of(line, kind, after="kind") if isinstance(kind, str)
                                 else None)
            cls = KINDS[kind]
            given = set(raw) - {"kind"}
            missing = [k for k in cls.keys if k not in given]
            extra = sorted(given - set(cls.keys) - set(cls.optional))
            if extra:  # first: a misspelt key is also a missing one, and its name is the better clue
                raise self.error(f"part {pid} ({kind}) has unknown key {extra[0]!r}",
                                 hint=_did_you_mean(extra[0], cls.keys + cls.optional)
                                 + f"a {kind} takes: " + ", ".join(cls.keys + cls.optional), line=line)
            if missing:
                raise self.error(f"part {pid} ({kind}) is missing key {missing[0]!r}",
                                 hint=f"a {kind} takes: " + ", ".join(cls.keys + cls.optional), line=line)
            parts.append(self.part(cls, pid, raw, line, resolve_value))
        ids = {p.id for p in parts}
        for p in parts:
            if isinstance(p.control, str) and p.control not in ids:
                raise self.error(f"part {p.id}: control names part {p.control!r}, which does not exist",
                                 hint=did_you_mean(p.control, ids) + "control = \"ID\" must name a part of [parts]",
                                 line=p.line)
            if isinstance(p.control, str) and p.control == p.id:
                raise self.error(f"part {p.id} is controlled by its own current",
                                 hint="name another part in control", line=p.line)
        self.limits.check_parts(parts)
        self.check_values(parts, parameters)
        return parts

    def node_list(self, raw: object, pid: str, key: str, count: int, line: int | None) -> tuple[str, ...]:
        good = self._good_nodes
        if type(raw) is list and len(raw) == count and all(type(n) is str and n in good for n in raw):
            return tuple(raw)  # names already checked (a node is shared by several parts)
        if isinstance(raw, str) and count == 1:
            raw = [raw]
        if not isinstance(raw, list) or len(raw) != count or not all(isinstance(n, str) for n in raw):
            want = "a node name" if count == 1 else f"a list of {count} node names"
            raise self.error(f"part {pid}: {key} must be {want}",
                             hint=f'write {key} = ["a", "b"]' if count == 2 else f'write {key} = "n1"', line=line)
        for n in raw:
            if not NODE_RE.match(n):
                raise self.error(f"part {pid}: node name {n!r} is not valid",
                                 hint="node names use letters A-Z a-z, digits and _", line=line)
        good.update(raw)
        return tuple(raw)

    def part(self, cls: type[Part], pid: str, raw: dict, line: int | None, resolve) -> Part:
        if cls.kind == "opamp":
            nodes = tuple(self.node_list(raw[k], pid, k, 1, line)[0] for k in ("plus", "minus", "out"))
            if nodes[0] == nodes[1]:
                raise self.error(f"op-amp {pid} has both inputs on node {nodes[0]!r}",
                                 hint="connect plus and minus to different nodes", line=line)
        else:
            nodes = self.node_list(raw["nodes"], pid, "nodes", 2, line)
            if nodes[0] == nodes[1]:
                raise self.error(f"part {pid} has both ends on node {nodes[0]!r}",
                                 hint="a part must join two different nodes; remove it or fix a node name",
                                 line=line)
        control = None
        if "control" in raw:
            if cls.kind in ("vcvs", "vccs"):
                control = self.node_list(raw["control"], pid, "control", 2, line)
            else:
                if not isinstance(raw["control"], str):
                    raise self.error(f"part {pid}: control must be the id of a part in quotes",
                                     hint='write control = "R1"', line=line)
                control = raw["control"]
        value = gain = None
        if "value" in raw:
            value = self.expression(raw["value"], what=f"part {pid} value", table="parts", key=pid,
                                    field="value", resolve=resolve)
            self.check_unit(cls.kind, "value", raw["value"], pid, "value")
        if "gain" in raw:
            gain = self.expression(raw["gain"], what=f"part {pid} gain", table="parts", key=pid,
                                   field="gain", resolve=resolve)
            self.check_unit(cls.kind, "gain", raw["gain"], pid, "gain")
        extra = []
        for key in cls.optional:
            if key in raw and key != "gain":
                if key == "rails":
                    r = raw[key]
                    if not isinstance(r, list) or len(r) != 2:
                        raise self.error(f"part {pid}: rails must be [low, high]",
                                         hint='write rails = ["-12", "12"]', line=line)
                    pair = tuple(self.expression(v, what=f"part {pid} rails", table="parts", key=pid,
                                                 field="rails", resolve=resolve) for v in r)
                    for v in r:
                        self.check_unit(cls.kind, "rails", v, pid, "rails")
                    extra.append((key, pair))
                else:
                    extra.append((key, self.expression(raw[key], what=f"part {pid} {key}", table="parts",
                                                       key=pid, field=key, resolve=resolve)))
                    self.check_unit(cls.kind, key, raw[key], pid, key)
        return cls(id=pid, nodes=nodes, line=line, value=value, gain=gain, control=control,
                   extra=tuple(extra))

    def check_values(self, parts: list[Part], parameters: dict[str, Parameter]) -> None:
        raw = {n: p.value for n, p in parameters.items() if p.value is not None}
        subs = {param(n): v for n, v in raw.items()}
        resolved: dict = {}  # parts share values: each distinct one is resolved and classified once

        def classify(value):
            for _ in range(0 if value.is_Number else len(subs) + 1):
                new = value.xreplace(subs)
                if new == value:
                    break
                value = new
            if not value.is_number:
                return value, False, False
            return value, value == 0, bool(value.is_extended_real and value < 0)

        for p in parts:
            if p.value is None:
                continue
            known = resolved.get(p.value)
            if known is None:
                known = resolved[p.value] = classify(p.value)
            value, zero, negative = known
            if not zero and not negative:
                continue
            if zero and p.value_must_be_nonzero:
                raise self.error(f"{p.kind} {p.id} has value 0",
                                 hint="a zero resistor or inductor is a wire and a zero capacitor is an open: "
                                      "join the nodes or remove the part", line=p.line)
            if negative and p.value_must_be_nonzero:
                self.warnings.append(Warning(
                    "negative-value", f"{p.kind} {p.id} has a negative value ({value}); "
                    "legal for negative-impedance models, but check the sign", p.id))

        def numeric(expr):
            if expr is None:
                return None
            for _ in range(len(subs) + 1):
                new = expr.xreplace(subs)
                if new == expr:
                    break
                expr = new
            return expr if expr.is_number and expr.is_extended_real else None

        for p in parts:  # kind-specific impossible values (op-amp rails, gbw...)
            for message, hint in p.check(numeric):
                raise self.error(message, hint=hint, line=p.line)

    # --- nodes, find, hand --------------------------------------------------
    def nodes(self, parts: list[Part], reference: str) -> tuple[str, ...]:
        seen: dict[str, None] = {reference: None}
        for p in parts:
            for n in p.terminals:
                seen.setdefault(n, None)
        used = {n for p in parts for n in p.terminals}
        if reference not in used:
            raise self.error(f"the reference node {reference!r} is not used by any part",
                             hint=f"connect a part to {reference!r}, or set reference = \"<node>\" at the top",
                             line=self.where.key("", "reference") or self.where.tables.get("parts"))
        for p in parts:
            for n in p.controls():
                if n not in seen:
                    raise self.error(f"part {p.id}: control node {n!r} is not connected to any part",
                                     hint=did_you_mean(n, seen) + "control nodes must be nodes of the circuit",
                                     line=p.line)
        return tuple(seen)

    def find(self, table: dict, parameters: dict[str, Parameter], nodes: tuple[str, ...],
             parts: list[Part]) -> dict[str, FindItem]:
        resolve = quantity_resolver(parameters, nodes, [p.id for p in parts])
        self.quantity_names = [f"V_{n}" for n in nodes] + [f"I_{p.id}" for p in parts] + ["s"]
        out: dict[str, FindItem] = {}
        for name, raw in table.items():
            line = self.where.key("find", name)
            if not ID_RE.match(name):
                raise self.error(f"[find] name {name!r} is not valid",
                                 hint="names start with a letter and use letters, digits and _", line=line)
            expr = self.expression(raw, what=f"[find] {name}", table="find", key=name, field=None,
                                   resolve=resolve)
            out[name] = FindItem(name, expr, raw if isinstance(raw, str) else str(raw), line)
        return out

    def hand(self, table: dict) -> dict[str, HandItem]:
        out: dict[str, HandItem] = {}
        for name, raw in table.items():
            line = self.where.key("hand", name)
            if not isinstance(raw, str):
                raise self.error(f"[hand] {name} must be a string in quotes",
                                 hint='write e.g. kcl_inv = "(V_inv - V_in)/R1 + (V_inv - V_out)/R2 = 0"',
                                 line=line)
            out[name] = HandItem(name, raw, line, self.where.column_of(line, raw))
        return out


def _did_you_mean(word, choices) -> str:
    """``"did you mean 'resistor'? "`` when ``word`` is a near miss of one of ``choices``, else ``""``."""
    if not isinstance(word, str):
        return ""
    close = difflib.get_close_matches(word, list(choices), n=1)
    return f"did you mean {close[0]!r}? " if close else ""


def quantity_resolver(parameters, nodes, part_ids):
    """Resolver for expressions about a circuit's quantities: parameters, V_node, I_part, s."""
    node_set, id_set = set(nodes), set(part_ids)

    def resolve(n: str):
        if n in parameters:
            return param(n)
        if n == "s":
            return s
        if n.startswith("V_") and n[2:] in node_set:
            return V(n[2:])
        if n.startswith("I_") and n[2:] in id_set:
            return I(n[2:])
        return None

    return resolve


def _toml_type(raw: object) -> str:
    return {bool: "true/false", list: "a list", dict: "a table"}.get(type(raw), type(raw).__name__)


def parse_circuit(text: str, filename: str = "<circuit>") -> Circuit:
    """Parse circuit-file text.

    >>> c = parse_circuit('[parts]\\nR1 = { kind = "resistor", nodes = ["a", "gnd"], value = "1k" }')
    >>> c.nodes, c.parts[0].value
    (('gnd', 'a'), 1000)
    """
    if text.startswith("\ufeff"):
        text = text[1:]
    return _Loader(text, filename).load()


def load_circuit(path: str | Path) -> Circuit:
    """Read and parse a circuit file, turning every file problem into an :class:`InputError`."""
    name = str(path)
    p = Path(path)
    try:
        if p.is_dir():
            raise InputError("is a directory, not a circuit file", hint="give the path of a .toml file", file=name)
        size = p.stat().st_size
        if size > MAX_FILE_BYTES:
            raise InputError(f"file is {size} bytes, more than the limit of {MAX_FILE_BYTES}",
                             hint="circuit files are small text files; check the path", file=name)
        with p.open("rb") as handle:  # bounded: a device such as /dev/zero reports size 0
            data = handle.read(MAX_FILE_BYTES + 1)
        if len(data) > MAX_FILE_BYTES:
            raise InputError(f"file is more than the limit of {MAX_FILE_BYTES} bytes",
                             hint="circuit files are small text files; check the path", file=name)
    except FileNotFoundError:
        raise InputError("no such file", hint="check the path", file=name) from None
    except PermissionError:
        raise InputError("permission denied reading the file", hint="check the file's permissions",
                         file=name) from None
    except OSError as err:
        raise InputError(f"cannot read the file ({err.strerror or err})", file=name) from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        line = data[:err.start].count(b"\n") + 1
        raise InputError(f"the file is not UTF-8 text (byte 0x{data[err.start]:02x})",
                         hint="save the file as UTF-8", file=name, line=line) from None
    return parse_circuit(text, name)
