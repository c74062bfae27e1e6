"""Safe position-dependent expressions such as "2.2 + 0.5*sin(pi*x/0.02)".

A case file may give eps_r as a formula in the coordinates x, y, z (metres). The text is parsed
with Python's ``ast`` module and compiled into a tree of numpy operations; only arithmetic,
comparisons, conditionals, the whitelisted functions (each with its number of arguments) and
constants below and the three coordinates are allowed, so a case file can never run code.
The text's length and the tree's depth are capped before anything recurses over it, so every
refusal is one InputError. The compiled object is vectorised: it takes coordinate arrays and
returns an array of the same shape.
"""

from __future__ import annotations

import ast
import math
from typing import Callable

import numpy as np

from .errors import InputError
from .schema import EXPRESSION_MAX_CHARS, EXPRESSION_MAX_DEPTH

# name -> (numpy function, number of arguments): a numpy ufunc takes an extra positional
# argument as its output buffer, so the count must be checked, not left to numpy.
FUNCTIONS: dict[str, tuple[Callable, int]] = {
    "sin": (np.sin, 1), "cos": (np.cos, 1), "tan": (np.tan, 1), "exp": (np.exp, 1),
    "log": (np.log, 1), "log10": (np.log10, 1), "sqrt": (np.sqrt, 1), "abs": (np.abs, 1),
    "tanh": (np.tanh, 1), "sinh": (np.sinh, 1), "cosh": (np.cosh, 1), "atan": (np.arctan, 1),
    "atan2": (np.arctan2, 2), "asin": (np.arcsin, 1), "acos": (np.arccos, 1),
    "min": (np.minimum, 2), "max": (np.maximum, 2), "where": (np.where, 3),
    "hypot": (np.hypot, 2),
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
        shown = _shown(text)
        if len(text) > EXPRESSION_MAX_CHARS:
            raise InputError(f"the expression {shown} is {len(text)} characters long; at most "
                             f"{EXPRESSION_MAX_CHARS} are allowed")
        try:
            tree = ast.parse(text.strip(), mode="eval")
        except SyntaxError as exc:
            raise InputError(f"cannot parse expression {shown}: {exc.msg}") from None
        except (ValueError, OverflowError, RecursionError, MemoryError) as exc:
            # e.g. an integer literal beyond Python's digit limit
            raise InputError(f"cannot parse expression {shown} ({type(exc).__name__})") from None
        if _depth(tree.body) > EXPRESSION_MAX_DEPTH:
            raise InputError(f"the expression {shown} nests more than {EXPRESSION_MAX_DEPTH} "
                             "operations deep; write it more simply")
        self._code = _compile(tree.body, shown)

    def __call__(self, x, y, z):
        x = np.asarray(x, dtype=float)
        with np.errstate(all="ignore"):
            value = self._code({"x": x, "y": np.asarray(y, float), "z": np.asarray(z, float)})
        return np.broadcast_to(np.asarray(value, dtype=float), x.shape)

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return f"Expression({self.text!r})"


def _shown(text: str, limit: int = 80) -> str:
    """The expression for a message: quoted, and cut short when long."""
    return repr(text if len(text) <= limit else text[:limit] + "...")


def _depth(root: ast.AST) -> int:
    """The depth of the tree, without recursion (a deep tree is what is being refused)."""
    deepest, stack = 0, [(root, 1)]
    while stack:
        node, depth = stack.pop()
        deepest = max(deepest, depth)
        if deepest > EXPRESSION_MAX_DEPTH:
            break
        stack.extend((child, depth + 1) for child in ast.iter_child_nodes(node))
    return deepest


def _compile(node: ast.AST, shown: str):
    def refuse(what: str):
        raise InputError(f"{what} is not allowed in expression {shown}; allowed are numbers, "
                         f"x, y, z (metres), + - * / **, comparisons, 'a if c else b', "
                         f"{', '.join(CONSTANTS)} and the functions "
                         f"{', '.join(f'{n}({_arguments(k)})' for n, (_, k) in FUNCTIONS.items())}")

    def sub(child):
        return _compile(child, shown)

    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
            refuse(f"the constant {node.value!r}")
        try:
            value = float(node.value)
        except OverflowError:
            value = math.inf
        if not math.isfinite(value):
            raise InputError(f"a number in expression {shown} is too large for a "
                             "floating-point number")
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
        op, left, right = _BINARY[type(node.op)], sub(node.left), sub(node.right)
        return lambda env: op(left(env), right(env))
    if isinstance(node, ast.UnaryOp) and type(node.op) in _UNARY:
        op, operand = _UNARY[type(node.op)], sub(node.operand)
        return lambda env: op(operand(env))
    if isinstance(node, ast.BoolOp) and type(node.op) in _BOOL:
        op, parts = _BOOL[type(node.op)], [sub(v) for v in node.values]

        def boolean(env):
            result = parts[0](env)
            for part in parts[1:]:
                result = op(result, part(env))
            return result
        return boolean
    if isinstance(node, ast.Compare) and all(type(o) in _COMPARE for o in node.ops):
        first = sub(node.left)
        pairs = [(_COMPARE[type(o)], sub(c)) for o, c in zip(node.ops, node.comparators)]

        def compare(env):
            left, result = first(env), True
            for op, right_code in pairs:
                right = right_code(env)
                result = np.logical_and(result, op(left, right))
                left = right
            return result
        return compare
    if isinstance(node, ast.IfExp):
        test, body, other = (sub(n) for n in (node.test, node.body, node.orelse))
        return lambda env: np.where(test(env), body(env), other(env))
    if isinstance(node, ast.Call):
        if not isinstance(node.func, ast.Name) or node.func.id not in FUNCTIONS or node.keywords:
            refuse("this function call")
        func, count = FUNCTIONS[node.func.id]
        if len(node.args) != count:
            raise InputError(f"{node.func.id}() takes {_arguments(count)}, not "
                             f"{len(node.args)}, in expression {shown}")
        args = [sub(a) for a in node.args]
        return lambda env: func(*(a(env) for a in args))
    refuse(f"the construct {type(node).__name__}")


def _arguments(count: int) -> str:
    return {1: "one argument", 2: "two arguments", 3: "three arguments"}[count]
