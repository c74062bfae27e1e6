"""Safe position-dependent expressions such as "2.2 + 0.5*sin(pi*x/0.02)".

A case file may give eps_r as a formula in the coordinates x, y, z (metres). The text is parsed
with Python's ``ast`` module and compiled into a tree of numpy operations; only arithmetic,
comparisons, conditionals, the whitelisted functions and constants below and the three
coordinates are allowed, so a case file can never run code. The compiled object is
vectorised: it takes coordinate arrays and returns an array of the same shape.
"""

from __future__ import annotations

import ast
import math
from typing import Callable

import numpy as np

from .errors import InputError

FUNCTIONS: dict[str, Callable] = {
    "sin": np.sin, "cos": np.cos, "tan": np.tan, "exp": np.exp, "log": np.log,
    "log10": np.log10, "sqrt": np.sqrt, "abs": np.abs, "tanh": np.tanh, "sinh": np.sinh,
    "cosh": np.cosh, "atan": np.arctan, "atan2": np.arctan2, "asin": np.arcsin,
    "acos": np.arccos, "min": np.minimum, "max": np.maximum, "where": np.where,
    "hypot": np.hypot,
}
CONSTANTS = {"pi": math.pi, "e": math.e}
VARIABLES = ("x", "y", "z")

_BINARY = {ast.Add: np.add, ast.Sub: np.subtract, ast.Mult: np.multiply,
           ast.Div: np.divide, ast.Pow: np.power}
_UNARY = {ast.USub: np.negative, ast.UAdd: np.positive}
_COMPARE = {ast.Lt: np.less, ast.LtE: np.less_equal, ast.Gt: np.greater,
            ast.GtE: np.greater_equal}
_BOOL = {ast.And: np.logical_and, ast.Or: np.logical_or}


class Expression:
    """A compiled formula f(x, y, z); ``str()`` gives back the source text."""

    def __init__(self, text: str):
        self.text = text
        try:
            tree = ast.parse(text.strip(), mode="eval")
        except SyntaxError as exc:
            raise InputError(f"cannot parse expression {text!r}: {exc.msg}") from None
        self._code = _compile(tree.body, text)

    def __call__(self, x, y, z):
        x = np.asarray(x, dtype=float)
        with np.errstate(all="ignore"):
            value = self._code({"x": x, "y": np.asarray(y, float), "z": np.asarray(z, float)})
        return np.broadcast_to(np.asarray(value, dtype=float), x.shape)

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return f"Expression({self.text!r})"


def _compile(node: ast.AST, text: str):
    def refuse(what: str):
        raise InputError(f"{what} is not allowed in expression {text!r}; allowed are numbers, "
                         f"x, y, z (metres), + - * / **, comparisons, 'a if c else b', "
                         f"{', '.join(CONSTANTS)} and the functions {', '.join(FUNCTIONS)}")

    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
            refuse(f"the constant {node.value!r}")
        value = float(node.value)
        return lambda env: value
    if isinstance(node, ast.Name):
        if node.id in VARIABLES:
            name = node.id
            return lambda env: env[name]
        if node.id in CONSTANTS:
            value = CONSTANTS[node.id]
            return lambda env: value
        refuse(f"the name {node.id!r}")
    if isinstance(node, ast.BinOp) and type(node.op) in _BINARY:
        op, left, right = _BINARY[type(node.op)], _compile(node.left, text), _compile(node.right, text)
        return lambda env: op(left(env), right(env))
    if isinstance(node, ast.UnaryOp) and type(node.op) in _UNARY:
        op, operand = _UNARY[type(node.op)], _compile(node.operand, text)
        return lambda env: op(operand(env))
    if isinstance(node, ast.BoolOp) and type(node.op) in _BOOL:
        op, parts = _BOOL[type(node.op)], [_compile(v, text) for v in node.values]

        def boolean(env):
            result = parts[0](env)
            for part in parts[1:]:
                result = op(result, part(env))
            return result
        return boolean
    if isinstance(node, ast.Compare) and all(type(o) in _COMPARE for o in node.ops):
        first = _compile(node.left, text)
        pairs = [(_COMPARE[type(o)], _compile(c, text)) for o, c in zip(node.ops, node.comparators)]

        def compare(env):
            left, result = first(env), True
            for op, right_code in pairs:
                right = right_code(env)
                result = np.logical_and(result, op(left, right))
                left = right
            return result
        return compare
    if isinstance(node, ast.IfExp):
        test, body, other = (_compile(n, text) for n in (node.test, node.body, node.orelse))
        return lambda env: np.where(test(env), body(env), other(env))
    if isinstance(node, ast.Call):
        if not isinstance(node.func, ast.Name) or node.func.id not in FUNCTIONS or node.keywords:
            refuse("this function call")
        func, args = FUNCTIONS[node.func.id], [_compile(a, text) for a in node.args]
        return lambda env: func(*(a(env) for a in args))
    refuse(f"the construct {type(node).__name__}")
