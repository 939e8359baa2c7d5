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
* any other clause is free text (unit, description).  A free-text clause that
  contains ``range:``, ``one of:``, ``<`` or ``>`` is refused as a malformed
  constraint, so a mistyped constraint is never silently ignored.

The defaults themselves must satisfy their constraints.
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
           "parse_assignment", "ParameterError"]


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


def _parse_comment(comment, name, ptype, where):
    bounds, choices, text = (), None, []
    for clause in _split_clauses(comment):
        low = clause.lower()
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
            if re.search(r"range\s*:|one\s+of\s*:|[<>]", low):
                raise ParameterError(f"{where}: malformed constraint in comment clause {clause!r}: "
                                     "start the clause with 'range:' or 'one of:' and separate clauses with ';'")
            text.append(clause)
            continue
        if bounds:
            raise ParameterError(f"{where}: more than one range given")
        bounds = new
    if bounds and ptype not in (int, float):
        raise ParameterError(f"{where}: a range applies to int or float parameters, not {_TYPES[ptype]}")
    return bounds, choices, "; ".join(text)


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
        bounds, choices, text = _parse_comment(comment, name, ptype, where)
        p = Parameter(name, default, ptype, node.lineno, bounds, None, text)
        if choices is not None:
            choices = tuple(conform(p, c, f"{where}, choice {c!r}") for c in choices)
            p = Parameter(name, default, ptype, node.lineno, bounds, choices, text)
        problem = violation(p, default)
        if problem:
            raise ParameterError(f"{where}: default {problem}")
        params[name] = p
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
    return values, overrides


def read_parameters_file(params_file):
    """The ``{name: value}`` JSON object in ``params_file``, or a one-line ParameterError."""
    p = Path(params_file)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ParameterError(f"parameters file {p} not found") from None
    except json.JSONDecodeError as e:
        raise ParameterError(f"parameters file {p}: not valid JSON (line {e.lineno}: {e.msg})") from None
    if not isinstance(data, dict):
        raise ParameterError(f"parameters file {p}: expected a JSON object of name: value, got {type(data).__name__}")
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
    return name, value
