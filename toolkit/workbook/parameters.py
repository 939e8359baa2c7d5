"""The parameters-cell grammar: reading a workbook's parameters cell into
:class:`Parameter` records, and checking and converting the values given for
a run against them.

The cell holds only assignments ``name = literal`` (or ``name: type =
literal``), comments and blank lines.  The literal's type is the parameter's
type: ``bool``, ``int``, ``float``, ``str``, ``list``, ``tuple`` or ``dict``
(``None`` is refused: give a typed default).  A value given for a run must
have that type; an ``int`` is accepted for a ``float`` (and stored as float);
``bool`` is never taken for a number; list/tuple/dict entries must match the
type the default's entries share.  A comment at the end of an assignment may
carry constraints, as clauses separated by ``;``::

    width = 120.0     # mm; range: 0 < x <= 500
    holes = 2         # >= 1
    detail = "flat"   # one of: "flat", "shaft"

* ``range: CHAIN`` -- a comparison chain over ``x`` (or the parameter's own
  name) and numeric literals: ``0 < x <= 500``, ``x >= 1``, ``-1 <= x < 1``,
  ``500 >= x > 0``.  A clause that starts with ``<``, ``<=``, ``>`` or ``>=``
  is short for ``range: x ...`` (``> 0``); a clause that starts with ``x`` (or
  the name) followed by one of them is a range as well.  For ``int`` and
  ``float`` parameters only.
* ``one of: LIT, LIT, ...`` -- the allowed values, Python literals of the
  parameter's type.
* ``items: CHAIN`` -- for a ``list`` or ``tuple`` of numbers: a range every
  item must lie in (``items: 0 <= x <= 1``).
* ``length: CHAIN`` or ``length: N`` -- for a ``list``, ``tuple`` or
  ``dict``: a range of its number of entries (``length: >= 1``), or an exact
  count (``length: 2``).  Without it, a container whose default has entries
  must have at least one (an empty one is refused); one whose default is
  empty may stay empty.
* ``rule: EXPR`` -- a rule across parameters, checked once every value is
  known: a comparison chain (``<``, ``<=``, ``>``, ``>=``, ``==``, ``!=``) of
  arithmetic (``+ - * /``, parentheses, ``min(...)``, ``max(...)``) over
  numeric parameters of the cell and numbers, e.g. ``rule: hole_diameter <
  width``; or a string parameter compared with a string by ``==`` or
  ``!=`` (``shape == "flat"``), a bool one with ``True`` or ``False``; comparisons joined by ``or`` and ``and``
  (``rule: shape == "flat" or load == "tension"``, ``rule: element_size ==
  0 or element_size >= width / 400``).  Any assignment's comment may carry
  rules.
* any other clause is free text (unit, description).  A free-text clause that
  contains ``range:``, ``one of:``, ``items:``, ``length:``, ``rule:``, ``<``
  or ``>`` is refused as a malformed constraint, so a mistyped constraint is
  never silently ignored.

The defaults themselves must satisfy their constraints.  Every number inside
a value, at any depth, must be finite, and a value may not nest deeper than
its default (an empty default list holds plain values).
"""
from __future__ import annotations

import ast
import difflib
import io
import json
import math
import numbers
import re
import tokenize
from dataclasses import dataclass
from pathlib import Path

from toolkit.errors import InputError, ParameterError
from toolkit.report.format import fmt

__all__ = ["Parameter", "parse_parameters", "conform", "violation", "resolve_values", "read_parameters_file",
           "parse_assignment", "check_rules", "rule_holds", "ParameterError"]


_TYPES = {bool: "bool", int: "int", float: "float", str: "str", list: "list", tuple: "tuple", dict: "dict"}
_OPS = {ast.Lt: "<", ast.LtE: "<=", ast.Gt: ">", ast.GtE: ">="}
_FLIP = {"<": ">", "<=": ">=", ">": "<", ">=": "<="}


@dataclass(frozen=True)
class Parameter:
    """One parameter of a workbook: name, default, type and constraints.

    ``bounds`` is a tuple of ``(op, number)`` meaning ``x op number``;
    ``choices`` a tuple of allowed values or None; ``text`` the comment's free text.
    """

    name: str
    default: object
    type: type
    line: int
    bounds: tuple = ()
    choices: tuple | None = None
    text: str = ""
    items: tuple = ()
    length: tuple = ()
    rules: tuple = ()

    @property
    def range_text(self):
        return " and ".join(f"x {op} {fmt(c, 6)}" for op, c in self.bounds)


def _split_clauses(comment):
    """Split a comment on ``;`` outside quotes."""
    out, cur, quote = [], [], None
    for ch in comment:
        if quote:
            cur.append(ch)
            if ch == quote:
                quote = None
        elif ch in "\"'":
            quote = ch
            cur.append(ch)
        elif ch == ";":
            out.append("".join(cur))
            cur = []
        else:
            cur.append(ch)
    out.append("".join(cur))
    return [c.strip() for c in out if c.strip()]


def _number_literal(node, where):
    try:
        v = ast.literal_eval(node)
    except ValueError:
        v = None
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise ParameterError(f"{where}: range bounds must be numbers, got {ast.unparse(node)!r}")
    return v


def _parse_range(text, name, where):
    src = text.strip()
    if src[:1] in "<>":
        src = "x " + src
    try:
        tree = ast.parse(src, mode="eval").body
    except SyntaxError:
        raise ParameterError(f"{where}: cannot read range {text!r}; write e.g. 'range: 0 < x <= 100' or '> 0'") from None
    if not isinstance(tree, ast.Compare):
        raise ParameterError(f"{where}: range {text!r} is not a comparison such as '0 < x <= 100'")
    operands = [tree.left] + list(tree.comparators)
    is_var = [isinstance(o, ast.Name) and o.id in ("x", name) for o in operands]
    if sum(is_var) != 1:
        raise ParameterError(f"{where}: range {text!r} must name the parameter exactly once, as 'x' or {name!r}")
    bounds = []
    for (left, right), op, (lv, rv) in zip(zip(operands, operands[1:]), tree.ops,
                                           zip(is_var, is_var[1:])):
        if type(op) not in _OPS:
            raise ParameterError(f"{where}: range {text!r} may only use <, <=, >, >=")
        sym = _OPS[type(op)]
        if lv:
            bounds.append((sym, _number_literal(right, where)))
        elif rv:
            bounds.append((_FLIP[sym], _number_literal(left, where)))
        else:
            raise ParameterError(f"{where}: range {text!r} compares two numbers; chain them through x")
    return tuple(bounds)


def _parse_choices(text, where):
    try:
        vals = ast.literal_eval("(" + text + ",)")
    except (ValueError, SyntaxError):
        raise ParameterError(f"{where}: cannot read choices {text!r}; write e.g. 'one of: \"flat\", \"shaft\"'") from None
    if not vals:
        raise ParameterError(f"{where}: 'one of:' lists no values")
    return tuple(vals)


def _looks_like_range(clause, name):
    return bool(re.match(rf"^\s*(x|{re.escape(name)})\s*[<>]", clause))


def _parse_length(text, where):
    t = text.strip()
    if re.fullmatch(r"\d+", t):
        return ((">=", int(t)), ("<=", int(t)))
    return _parse_range(t, "x", where)


def _parse_comment(comment, name, ptype, where):
    bounds, choices, text = (), None, []
    items, length, rules = (), (), []
    for clause in _split_clauses(comment):
        low = clause.lower()
        if low.startswith("items:"):
            items = _parse_range(clause[6:], "x", where)
            continue
        if low.startswith("length:"):
            length = _parse_length(clause[7:], where)
            continue
        if low.startswith("rule:"):
            rules.append(_parse_rule(clause[5:], where))
            continue
        if low.startswith("range:"):
            new = _parse_range(clause[6:], name, where)
        elif clause[:1] in "<>" or _looks_like_range(clause, name) or re.match(r"^\s*-?[\d.]+\s*[<>]", clause):
            new = _parse_range(clause, name, where)
        elif low.startswith("one of:"):
            if choices is not None:
                raise ParameterError(f"{where}: 'one of:' given twice")
            choices = _parse_choices(clause[7:], where)
            continue
        else:
            if re.search(r"range\s*:|one\s+of\s*:|items\s*:|length\s*:|rule\s*:|[<>]", low):
                raise ParameterError(f"{where}: malformed constraint in comment clause {clause!r}: start the "
                                     "clause with 'range:', 'one of:', 'items:', 'length:' or 'rule:' and "
                                     "separate clauses with ';'")
            text.append(clause)
            continue
        if bounds:
            raise ParameterError(f"{where}: more than one range given")
        bounds = new
    if bounds and ptype not in (int, float):
        raise ParameterError(f"{where}: a range applies to int or float parameters, not {_TYPES[ptype]}")
    if items and ptype not in (list, tuple):
        raise ParameterError(f"{where}: 'items:' applies to list or tuple parameters, not {_TYPES[ptype]}")
    if length and ptype not in (list, tuple, dict):
        raise ParameterError(f"{where}: 'length:' applies to list, tuple or dict parameters, not {_TYPES[ptype]}")
    return bounds, choices, "; ".join(text), items, length, tuple(rules)


_RULE_OPS = {ast.Lt: "<", ast.LtE: "<=", ast.Gt: ">", ast.GtE: ">=", ast.Eq: "==", ast.NotEq: "!="}
_RULE_NODES = (ast.Expression, ast.Compare, ast.BinOp, ast.UnaryOp, ast.Name, ast.Constant, ast.Load, ast.Call,
               ast.Add, ast.Sub, ast.Mult, ast.Div, ast.USub, ast.UAdd, ast.BoolOp, ast.Or, ast.And, *_RULE_OPS)


def _rule_comparisons(node):
    """The comparisons of a rule body (a comparison, or several joined by
    ``or``/``and``), or None when the body is something else."""
    if isinstance(node, ast.Compare):
        return [node]
    if isinstance(node, ast.BoolOp):
        out = []
        for v in node.values:
            sub = _rule_comparisons(v)
            if sub is None:
                return None
            out += sub
        return out
    return None


def _parse_rule(text, where):
    """A ``rule:`` clause: its source, checked to use only the rule grammar."""
    src = text.strip()
    try:
        tree = ast.parse(src, mode="eval")
    except SyntaxError:
        raise ParameterError(f"{where}: cannot read rule {src!r}; write e.g. 'rule: hole_diameter < width'") from None
    if _rule_comparisons(tree.body) is None:
        raise ParameterError(f"{where}: rule {src!r} is not a comparison such as 'hole_diameter < width' "
                             "(or comparisons joined by 'or' and 'and')")
    for node in ast.walk(tree):
        if not isinstance(node, _RULE_NODES):
            raise ParameterError(f"{where}: rule {src!r} may use only parameter names, numbers, + - * /, "
                                 "min(), max(), comparisons, 'or' and 'and'")
        if isinstance(node, ast.Constant) and not isinstance(node.value, (int, float, str)):
            raise ParameterError(f"{where}: rule {src!r}: only numbers, strings and True/False may appear as "
                                 "constants")
        if isinstance(node, ast.Call) and not (isinstance(node.func, ast.Name) and node.func.id in ("min", "max")
                                               and node.args and not node.keywords):
            raise ParameterError(f"{where}: rule {src!r}: the only functions are min() and max()")
    return src


def _rule_names(src):
    tree = ast.parse(src, mode="eval")
    calls = {id(n.func) for n in ast.walk(tree) if isinstance(n, ast.Call)}
    return [n.id for n in ast.walk(tree) if isinstance(n, ast.Name) and id(n) not in calls]


def _eval_rule_node(node, values):
    if isinstance(node, ast.Constant):
        return node.value
    if isinstance(node, ast.Name):
        return values[node.id]
    if isinstance(node, ast.UnaryOp):
        v = _eval_rule_node(node.operand, values)
        return -v if isinstance(node.op, ast.USub) else v
    if isinstance(node, ast.BinOp):
        a, b = _eval_rule_node(node.left, values), _eval_rule_node(node.right, values)
        if isinstance(node.op, ast.Div):
            return a / b if b != 0 else math.inf
        return {ast.Add: a + b, ast.Sub: a - b, ast.Mult: a * b}[type(node.op)]
    if isinstance(node, ast.Call):
        args = [_eval_rule_node(a, values) for a in node.args]
        return min(args) if node.func.id == "min" else max(args)
    raise AssertionError(node)  # pragma: no cover - _parse_rule refuses other nodes


def _kind(node, types):
    """``str`` or ``bool`` for a rule operand that is a constant or a
    parameter of that type, else ``None`` (numeric)."""
    if isinstance(node, ast.Constant) and isinstance(node.value, (str, bool)):
        return type(node.value)
    if isinstance(node, ast.Name) and types.get(node.id) in (str, bool):
        return types[node.id]
    return None


def _check_rule_types(src, types):
    """Why rule ``src`` mixes kinds wrongly for parameters of these ``types``
    (``{name: type}``), or ``""``: a string (or a bool) may only be compared,
    by ``==`` or ``!=``, with another string (bool); everything else must be
    numeric."""
    for cmp in _rule_comparisons(ast.parse(src, mode="eval").body):
        operands = [cmp.left] + list(cmp.comparators)
        kinds = {_kind(o, types) for o in operands}
        if kinds != {None}:
            if len(kinds) > 1:
                return "a string or bool is compared with a value of another kind"
            if any(_RULE_OPS[type(op)] not in ("==", "!=") for op in cmp.ops):
                return "strings and bools may only be compared by == or !="
            continue
        for node in operands:
            for n in ast.walk(node):
                if (isinstance(n, ast.Constant) and isinstance(n.value, (str, bool))) or \
                        (isinstance(n, ast.Name) and types.get(n.id) in (str, bool)):
                    return f"{ast.unparse(n)} (a string or bool) appears inside arithmetic"
    return ""


def _compare_holds(cmp, values):
    vals = [_eval_rule_node(o, values) for o in [cmp.left] + list(cmp.comparators)]
    if any(isinstance(v, (str, bool)) for v in vals):
        return all((a == b) == (_RULE_OPS[type(op)] == "==") for op, a, b in zip(cmp.ops, vals, vals[1:]))
    ops = {"<": float.__lt__, "<=": float.__le__, ">": float.__gt__, ">=": float.__ge__,
           "==": float.__eq__, "!=": float.__ne__}
    return all(ops[_RULE_OPS[type(op)]](float(a), float(b)) for op, a, b in zip(cmp.ops, vals, vals[1:]))


def _rule_node_holds(node, values):
    if isinstance(node, ast.BoolOp):
        parts = (_rule_node_holds(v, values) for v in node.values)
        return any(parts) if isinstance(node.op, ast.Or) else all(parts)
    return _compare_holds(node, values)


def rule_holds(src, values):
    """Whether rule ``src`` (a ``rule:`` clause) holds for ``values``."""
    return _rule_node_holds(ast.parse(src, mode="eval").body, values)


def check_rules(params, values, label):
    """One-line ParameterError naming every broken ``rule:`` of ``params`` for ``values``."""
    broken = []
    for p in params.values():
        for src in p.rules:
            if not rule_holds(src, values):
                shown = ", ".join(f"{n} = {values[n]!r}" if isinstance(values[n], (str, bool))
                                  else f"{n} = {fmt(values[n], 6)}"
                                  for n in dict.fromkeys(_rule_names(src)))
                broken.append(f"rule {src!r} of {label} does not hold ({shown})")
    if broken:
        raise ParameterError("; ".join(broken))


def _depth(v, limit=64):
    """Nesting depth of a value (0 for a scalar, 1 for a flat list), stopping past ``limit``."""
    if not isinstance(v, (list, tuple, dict)):
        return 0
    if limit <= 0:
        return 1
    children = v.values() if isinstance(v, dict) else v
    return 1 + max((_depth(c, limit - 1) for c in children), default=0)


def _first_non_finite(v, where):
    """``where`` of the first NaN or infinity inside ``v``, or None."""
    if isinstance(v, float):
        return None if math.isfinite(v) else where
    if isinstance(v, (list, tuple)):
        for i, c in enumerate(v):
            w = _first_non_finite(c, f"{where}, item {i}")
            if w:
                return w
    if isinstance(v, dict):
        for k, c in v.items():
            w = _first_non_finite(c, f"{where}, key {k!r}")
            if w:
                return w
    return None


def _comments_by_line(source):
    out = {}
    try:
        for tok in tokenize.generate_tokens(io.StringIO(source).readline):
            if tok.type == tokenize.COMMENT:
                out[tok.start[0]] = tok.string[1:].strip()
    except (tokenize.TokenError, IndentationError):
        pass
    return out


def parse_parameters(source, workbook="workbook"):
    """Read a parameters cell: ``{name: Parameter}`` in cell order.

    Raises :class:`ParameterError` if the cell holds anything but literal
    assignments, a default has an unsupported type, a constraint is malformed
    or a default breaks its own constraint (grammar in the module notes).
    """
    try:
        tree = ast.parse(source)
    except SyntaxError as e:
        raise ParameterError(f"parameters cell of {workbook}: not plain Python (line {e.lineno}: {e.msg}); "
                             "keep magics and imports out of it") from None
    comments = _comments_by_line(source)
    params = {}
    for node in tree.body:
        if isinstance(node, ast.Expr) and isinstance(node.value, ast.Constant) and isinstance(node.value.value, str):
            continue  # a docstring-like note
        if isinstance(node, ast.Assign) and len(node.targets) == 1 and isinstance(node.targets[0], ast.Name):
            name, value_node = node.targets[0].id, node.value
        elif isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name) and node.value is not None:
            name, value_node = node.target.id, node.value
        else:
            raise ParameterError(f"parameters cell of {workbook}, line {node.lineno}: only 'name = literal' "
                                 f"assignments are allowed, got {ast.unparse(node)!r}")
        where = f"parameter {name!r} of {workbook} (line {node.lineno})"
        if name in params:
            raise ParameterError(f"{where}: assigned twice in the parameters cell")
        try:
            default = ast.literal_eval(value_node)
        except ValueError:
            raise ParameterError(f"{where}: default must be a literal, got {ast.unparse(value_node)!r}") from None
        ptype = type(default)
        if ptype not in _TYPES:
            raise ParameterError(f"{where}: default {default!r} has unsupported type {ptype.__name__}; "
                                 "use bool, int, float, str, list, tuple or dict")
        if ptype is float and not math.isfinite(default):
            raise ParameterError(f"{where}: default must be finite")
        comment = " ; ".join(comments[i] for i in range(node.lineno, node.end_lineno + 1) if i in comments)
        bounds, choices, text, items, length, rules = _parse_comment(comment, name, ptype, where)
        p = Parameter(name, default, ptype, node.lineno, bounds, None, text, items, length, rules)
        if choices is not None:
            choices = tuple(conform(p, c, f"{where}, choice {c!r}") for c in choices)
            p = Parameter(name, default, ptype, node.lineno, bounds, choices, text, items, length, rules)
        problem = violation(p, default)
        if problem:
            raise ParameterError(f"{where}: default {problem}")
        params[name] = p
    for p in params.values():
        for src in p.rules:
            for n in _rule_names(src):
                if n not in params or params[n].type not in (int, float, str, bool):
                    raise ParameterError(f"rule {src!r} of {workbook} (line {p.line}): {n!r} is not a numeric, "
                                         "string or bool parameter of the cell")
            why = _check_rule_types(src, {n: q.type for n, q in params.items()})
            if why:
                raise ParameterError(f"rule {src!r} of {workbook} (line {p.line}): {why}")
    check_rules(params, {n: p.default for n, p in params.items()}, f"{workbook} (defaults)")
    return params


def _type_name(v):
    return "bool" if isinstance(v, bool) else type(v).__name__


def _conform_scalar(kind, value, where):
    if kind is bool:
        if isinstance(value, bool):
            return value
    elif kind is int:
        if isinstance(value, numbers.Integral) and not isinstance(value, bool):
            return int(value)
    elif kind is float:
        if isinstance(value, numbers.Real) and not isinstance(value, bool):
            f = float(value)
            if not math.isfinite(f):
                raise ParameterError(f"{where}: must be finite, got {f}")
            return f
    elif kind is str:
        if isinstance(value, str):
            return value
    raise ParameterError(f"{where} expects {_TYPES[kind]}, got {_type_name(value)} {value!r}")


def _common_type(items):
    kinds = {type(v) for v in items}
    if kinds == {int, float}:
        return float
    if len(kinds) == 1:
        k = kinds.pop()
        if k in (bool, int, float, str):
            return k
    return None


def conform(p, value, where):
    """``value`` converted to parameter ``p``'s type, or ParameterError."""
    kind = p.type
    if kind in (bool, int, float, str):
        return _conform_scalar(kind, value, where)
    if kind in (list, tuple, dict):
        bad = _first_non_finite(value, where)
        if bad:
            raise ParameterError(f"{bad}: must be finite")
        allowed = max(_depth(p.default), 1)
        if _depth(value, allowed + 1) > allowed:
            raise ParameterError(f"{where}: nested deeper than its type allows ({allowed} "
                                 f"level{'s' if allowed > 1 else ''}, as in its default)")
    if kind in (list, tuple):
        if not isinstance(value, (list, tuple)):
            raise ParameterError(f"{where} expects {_TYPES[kind]}, got {_type_name(value)} {value!r}")
        inner = _common_type(p.default)
        items = [_conform_scalar(inner, v, f"{where}, item {i}") if inner else v for i, v in enumerate(value)]
        return kind(items)
    if kind is dict:
        if not isinstance(value, dict):
            raise ParameterError(f"{where} expects dict, got {_type_name(value)} {value!r}")
        inner = _common_type(p.default.values())
        return {str(k): (_conform_scalar(inner, v, f"{where}, key {k!r}") if inner else v) for k, v in value.items()}
    raise ParameterError(f"{where}: unsupported type")  # pragma: no cover - parse_parameters refuses others


def violation(p, value):
    """Why ``value`` breaks ``p``'s constraints, or ''."""
    for op, c in p.bounds:
        ok = {"<": value < c, "<=": value <= c, ">": value > c, ">=": value >= c}[op]
        if not ok:
            return f"= {fmt(value, 6)} is out of range: {p.range_text}"
    if p.choices is not None and value not in p.choices:
        return f"= {value!r} is not one of: {', '.join(repr(c) for c in p.choices)}"
    if p.type in (list, tuple, dict):
        n = len(value)
        length = p.length or (((">=", 1),) if len(p.default) else ())
        for op, c in length:
            if not {"<": n < c, "<=": n <= c, ">": n > c, ">=": n >= c}[op]:
                need = " and ".join(f"length {o} {fmt(k, 6)}" for o, k in length)
                return f"has {n} entr{'y' if n == 1 else 'ies'}; it needs {need}"
    for i, v in enumerate(value if p.items and p.type in (list, tuple) else ()):
        for op, c in p.items:
            if isinstance(v, bool) or not isinstance(v, numbers.Real) or \
                    not {"<": v < c, "<=": v <= c, ">": v > c, ">=": v >= c}[op]:
                rng = " and ".join(f"x {o} {fmt(k, 6)}" for o, k in p.items)
                return f"item {i} = {v!r} is out of range: {rng}"
    return ""


def resolve_values(params, given, label):
    """Full parameter set (defaults updated by ``given``), or one-line ParameterError."""
    unknown = [k for k in given if k not in params]
    if unknown:
        parts = []
        for k in unknown:
            hint = difflib.get_close_matches(k, list(params), n=1) if isinstance(k, str) else []
            parts.append(repr(k) + (f" (did you mean {hint[0]!r}?)" if hint else ""))
        raise ParameterError(f"unknown parameter{'s' if len(unknown) > 1 else ''} {', '.join(parts)} for {label}; "
                             f"known: {', '.join(params) if params else '(none)'}")
    problems, values, overrides = [], {}, {}
    for name, p in params.items():
        if name not in given:
            values[name] = p.default
            continue
        where = f"parameter {name!r} of {label}"
        try:
            v = conform(p, given[name], where)
        except ParameterError as e:
            problems.append(str(e))
            continue
        why = violation(p, v)
        if why:
            problems.append(f"{where} {why}")
            continue
        values[name] = overrides[name] = v
    if problems:
        raise ParameterError("; ".join(problems))
    check_rules(params, values, label)
    return values, overrides


def read_parameters_file(params_file, workbook=None):
    """The ``{name: value}`` JSON object in ``params_file``, or a one-line ParameterError.

    The file may also be a run's ``summary.json`` (an object with
    ``workbook`` and a ``parameters`` object): then its ``parameters`` are the
    values and its other keys are ignored; if ``workbook`` (the name being
    rendered) is given, the summary's workbook must be the same one.
    """
    p = Path(params_file)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ParameterError(f"parameters file {p} not found") from None
    except json.JSONDecodeError as e:
        raise ParameterError(f"parameters file {p}: not valid JSON (line {e.lineno}: {e.msg})") from None
    except RecursionError:
        raise ParameterError(f"parameters file {p}: nested too deeply") from None
    if not isinstance(data, dict):
        raise ParameterError(f"parameters file {p}: expected a JSON object of name: value, got {type(data).__name__}")
    if isinstance(data.get("parameters"), dict) and "workbook" in data:
        if workbook is not None and data["workbook"] != workbook:
            raise ParameterError(f"parameters file {p} is the summary of workbook {data['workbook']!r}, "
                                 f"not of {workbook!r}")
        return dict(data["parameters"])
    return data


def _reject_constant(s):
    raise InputError(s)


def parse_assignment(text):
    """``"name=value"`` -> (name, value); value read as JSON where possible, else kept as a string."""
    name, sep, raw = text.partition("=")
    name = name.strip()
    if not sep or not name.isidentifier():
        raise ParameterError(f"--set {text!r}: write NAME=VALUE, e.g. --set width=120")
    try:
        value = json.loads(raw, parse_constant=_reject_constant)
    except ValueError:
        value = raw
    except RecursionError:
        raise ParameterError(f"--set {name}: value nested too deeply") from None
    return name, value
