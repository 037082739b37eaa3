"""How many items a loop can walk, where the code fixes it: literal tables, bounded ranges, comprehensions of them."""
from __future__ import annotations

import ast

from auditor.patterns import int_bounds, literal_number
from auditor.local_returns import private_calls
from auditor.rule import Context

#: calls that walk their one argument item for item, no more items than it has
_SAME_LENGTH = frozenset({"list", "tuple", "set", "sorted", "reversed", "enumerate", "iter", "frozenset"})
#: numpy-API constructors that keep a literal nested list's rows as the array's first axis
_ARRAYS = frozenset({"array", "asarray", "asanyarray"})
#: methods that grow a list in place: a list built once but grown later has no fixed length
_GROWING = frozenset({"append", "extend", "insert", "__iadd__"})


def item_bound(ctx: Context, it: ast.AST, depth: int = 6) -> int | None:
    """The most items `it` can yield as the code fixes it, or None when open.

    A literal tuple/list/set (or numpy array of one); `range(...)` with a bounded stop (`patterns.int_bounds`, or `len` of a
    bounded sequence); `list(x)`, `enumerate(x)`, `zip(a, b)`; a comprehension (filters only drop
    items); a local bound only to such values and never grown; a module-level name bound once to such
    a value that nothing in the file rebinds, grows or stores into; a parameter of a private function
    whose every call in the module passes such a value.
    """
    if depth <= 0:
        return None
    if isinstance(it, (ast.Tuple, ast.List, ast.Set)):
        return None if any(isinstance(e, ast.Starred) for e in it.elts) else len(it.elts)
    if isinstance(it, (ast.ListComp, ast.GeneratorExp, ast.SetComp)):
        return _product([item_bound(ctx, g.iter, depth - 1) for g in it.generators])
    if isinstance(it, ast.Name):
        return _name_bound(ctx, it, depth)
    if isinstance(it, ast.Call) and ctx.family(it) in _ARRAYS and len(it.args) == 1 \
            and isinstance(it.args[0], (ast.Tuple, ast.List)):
        return item_bound(ctx, it.args[0], depth - 1)  # np.array([[w, x], ...]) walks its first axis: one row per item
    if isinstance(it, ast.Call) and isinstance(it.func, ast.Name) and not it.keywords \
            and not any(isinstance(a, ast.Starred) for a in it.args) and it.func.id not in ctx.imports.bindings:
        name, args = it.func.id, it.args
        if name == "range" and 1 <= len(args) <= 3:
            return _range_bound(ctx, args, depth)
        if name in _SAME_LENGTH and len(args) == 1:
            return item_bound(ctx, args[0], depth - 1)
        if name == "zip" and args:  # zip stops at its shortest argument
            known = [b for b in (item_bound(ctx, a, depth - 1) for a in args) if b is not None]
            return min(known) if known else None
    return None


def _product(bounds: list[int | None]) -> int | None:
    total = 1
    for b in bounds:
        if b is None:
            return None
        total *= b
    return total


def _range_bound(ctx: Context, args: list[ast.expr], depth: int) -> int | None:
    """Length of `range(stop)`, `range(start, stop[, step > 0])` when start and stop are bounded."""
    start = int_bounds(ctx, args[0])[0] if len(args) > 1 else 0
    stop_node = args[min(1, len(args) - 1)]
    stop = int_bounds(ctx, stop_node)[1]
    if stop is None and isinstance(stop_node, ast.Call) and isinstance(stop_node.func, ast.Name) \
            and stop_node.func.id == "len" and len(stop_node.args) == 1 and not stop_node.keywords:
        stop = item_bound(ctx, stop_node.args[0], depth - 1)
    step = literal_number(args[2]) if len(args) == 3 else 1
    if start is None or stop is None or not isinstance(step, int) or step <= 0:
        return None
    return max(-(-(stop - start) // step), 0)  # ceil((stop - start) / step), as range counts


def _name_bound(ctx: Context, name: ast.Name, depth: int) -> int | None:
    """Bound of a local every assignment of which is bounded, or of a private function's parameter."""
    scope = ctx.scope(name)
    bindings = ctx.flow(scope).of(name.id)
    if len(bindings) == 1 and isinstance(bindings[0].stmt, ast.arg) and isinstance(scope, ast.FunctionDef):
        return _parameter_bound(ctx, scope, name.id, depth)  # a parameter never rebound in the body
    if not bindings and scope is not ctx.tree:
        return _module_constant_bound(ctx, name, depth)  # a free name in a function: the module's, if bound there
    if not bindings or any(b.kind not in ("assign", "unpack") or b.value is None for b in bindings) \
            or name.id in ctx.cached("tripcount:grown", scope, lambda: _grown_names(scope)):
        return None
    found = [item_bound(ctx, b.value, depth - 1) for b in bindings if b.value is not None]
    return None if None in found else max(found)  # type: ignore[type-var]


def _module_constant_bound(ctx: Context, name: ast.Name, depth: int) -> int | None:
    """Bound of a module-level name bound once, by plain assignment, that no statement in the file rebinds
    (`global`), grows or stores into, read from a function that does not bind it itself (a constant table)."""
    for scope in ctx.ancestors(name):
        if isinstance(scope, ast.ClassDef) and not _in_function_of(ctx, name, scope):
            return None  # read in a class body: the class's own names come first
        if isinstance(scope, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)) and ctx.flow(scope).of(name.id):
            return None  # an enclosing function binds it
    bindings = ctx.flow(ctx.tree).of(name.id)
    if len(bindings) != 1 or bindings[0].kind != "assign" or bindings[0].value is None \
            or name.id in ctx.imports.bindings:
        return None
    tree = ctx.tree
    changed = ctx.cached("tripcount:module-changed", tree, lambda: _grown_names(tree) | _declared_global(tree))
    return None if name.id in changed else item_bound(ctx, bindings[0].value, depth - 1)


def _in_function_of(ctx: Context, name: ast.Name, cls: ast.ClassDef) -> bool:
    """True when a function nested in `cls` holds `name`: methods do not see the class body's names."""
    for anc in ctx.ancestors(name):
        if anc is cls:
            return False
        if isinstance(anc, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
            return True
    return False


def _declared_global(tree: ast.AST) -> frozenset[str]:
    """Names any function declares `global` or `nonlocal`: it may rebind them."""
    return frozenset(n for node in ast.walk(tree) if isinstance(node, (ast.Global, ast.Nonlocal)) for n in node.names)


def _grown_names(scope: ast.AST) -> frozenset[str]:
    """Names `name.append(v)`, `name[k:k] = ...` touch in the scope: those sequences may be longer
    than when they were built (one walk per scope, shared by every loop in it)."""
    found = set()
    for n in ast.walk(scope):
        if isinstance(n, ast.Attribute) and n.attr in _GROWING and isinstance(n.value, ast.Name):
            found.add(n.value.id)
        elif isinstance(n, ast.Subscript) and isinstance(n.ctx, ast.Store) and isinstance(n.value, ast.Name):
            found.add(n.value.id)
    return frozenset(found)


def _parameter_bound(ctx: Context, func: ast.FunctionDef, param: str, depth: int) -> int | None:
    """The longest value any call passes for `param`, when `func` is a private module-level function
    (its callers live in this module, by the naming convention) used only by direct calls here."""
    calls = private_calls(ctx, func)
    position = _position(func, param)
    if not calls or position is None:
        return None
    found = []
    for call in calls:
        arg = _argument(func, call, param, position)
        found.append(None if arg is None else item_bound(ctx, arg, depth - 1))
    return None if None in found else max(found)  # type: ignore[type-var]


def _position(func: ast.FunctionDef, param: str) -> int | None:
    """Index among the positional parameters, -1 for keyword-only, None for *args/**kwargs or absent."""
    positional = [a.arg for a in (*func.args.posonlyargs, *func.args.args)]
    if param in positional:
        return positional.index(param)
    return -1 if param in (a.arg for a in func.args.kwonlyargs) else None


def _argument(func: ast.FunctionDef, call: ast.Call, param: str, position: int) -> ast.expr | None:
    """The expression a call passes for `param` (its default when the call leaves it out)."""
    if 0 <= position < len(call.args):
        return call.args[position]
    for k in call.keywords:
        if k.arg == param:
            return k.value
    positional = [*func.args.posonlyargs, *func.args.args]
    if position >= 0:
        defaults = func.args.defaults
        offset = position - (len(positional) - len(defaults))
        return defaults[offset] if offset >= 0 else None
    kw = [a.arg for a in func.args.kwonlyargs].index(param)
    return func.args.kw_defaults[kw]
