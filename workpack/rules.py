"""Rule expressions and templates: compiled in a sandbox, checked before they ever run.

Rule files are written by people and may be edited on board, so they are data,
never code: Jinja2's ``ImmutableSandboxedEnvironment`` with ``StrictUndefined``,
no loader (so ``include``, ``import`` and ``extends`` have nothing to read), no
globals, an allow-list of filters and tests, and no function calls at all.
Beyond what the sandbox refuses at run time, ``lint_source`` refuses at load
time: private attributes (``__class__``), calls, file-reading tags, unknown
names and unknown attributes, each with the nearest known name. Pure.
"""

from __future__ import annotations

import math
import re
import time
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from contextvars import ContextVar
from dataclasses import dataclass, field
from typing import Any, Literal

from jinja2 import StrictUndefined, TemplateSyntaxError, nodes
from jinja2.compiler import CodeGenerator, Frame
from jinja2.exceptions import SecurityError, UndefinedError
from jinja2.sandbox import ImmutableSandboxedEnvironment

from workpack.errors import InputError, Problem, WorkpackError, did_you_mean
from workpack.model.package import SearchOutcome, SignalWord
from workpack.model.rules import CautionLibrary, Rule, RuleFile, StepRule

ALLOWED_FILTERS = ("abs", "default", "first", "float", "format", "int", "join", "last",
                   "length", "list", "lower", "max", "min", "replace", "round", "sort",
                   "title", "upper")
ALLOWED_TESTS = ("defined", "divisibleby", "eq", "even", "ge", "gt", "in", "le", "lt", "ne",
                 "none", "number", "odd", "string", "undefined")
REFUSED_NODES: dict[type[nodes.Node], str] = {
    nodes.Include: "'include' reads files: not allowed in a rule",
    nodes.Import: "'import' reads files: not allowed in a rule",
    nodes.FromImport: "'import' reads files: not allowed in a rule",
    nodes.Extends: "'extends' reads files: not allowed in a rule",
    nodes.Macro: "macros are not allowed in a rule",
    nodes.CallBlock: "call blocks are not allowed in a rule",
    nodes.Call: "function and method calls are not allowed in a rule",
    # Both build their body as one text before anything bounds it: not needed in a rule.
    nodes.FilterBlock: "filter blocks are not allowed in a rule (use a filter: x | upper)",
    nodes.AssignBlock: "block assignments are not allowed in a rule (use {% set x = … %})",
}

@dataclass(frozen=True)
class ListOf:
    """A name that holds a list, each item described by ``item`` (a nested schema): loop
    over it, or take an attribute of every item with a filter's ``attribute=``."""

    item: Mapping[str, Any]


Schema = Mapping[str, Any]  # name → nested schema, ListOf(schema), or None for a plain value


class RuleError(WorkpackError):
    """A rule failed while being applied (a value it needs is missing)."""


# --- what one evaluation of a rule text may do --------------------------------------------
# A rule builds short texts and small numbers from the plant; these bounds are far above
# that and far below what would take a machine's memory or minutes of time.
MAX_SOURCE = 20_000  # characters in one rule text
MAX_NESTING = 32  # depth of one text's syntax tree (brackets, operators, filters)
MAX_STRING = 100_000  # characters in any text built, the rendered text included
MAX_ITEMS = 10_000  # items in any list built, sorted or listed
MAX_INT_BITS = 1024  # any whole number built (about 308 digits; beyond any float)
MAX_FORMAT_WIDTH = 200  # width or precision in a '%' format
MAX_ROUND_DIGITS = 20
MAX_STEPS = 100_000  # blocks entered (each loop pass is one) per evaluation
MAX_SECONDS = 1.0  # wall-clock per evaluation: the backstop behind the counts


class RuleLimit(SecurityError):
    """A rule text went past one of the sandbox's limits."""


@dataclass
class _Budget:
    deadline: float
    steps: int = field(default=0)


_BUDGET: ContextVar[_Budget | None] = ContextVar("rule_budget", default=None)

# A '%' conversion: mapping key, flags, width, precision, length, type.
_CONVERSION = re.compile(r"%(?:\([^)]*\))?[#0\- +]*(\*|\d+)?(?:\.(\*|\d+))?[hlL]?(.)")


def _check_text(value: Any, what: str) -> None:
    if isinstance(value, str) and len(value) > MAX_STRING:
        raise RuleLimit(f"{what} would be {len(value):,} characters long; a rule may build "
                        f"texts of up to {MAX_STRING:,}")


def _check_format(template: Any) -> None:
    """Refuse '%' widths and precisions that would build huge texts ('%999999999d')."""
    if not isinstance(template, str):
        return
    for found in _CONVERSION.finditer(template):
        for part in found.group(1, 2):
            if part == "*" or (part is not None and int(part) > MAX_FORMAT_WIDTH):
                raise RuleLimit(f"format width or precision {part!r} is more than a rule may "
                                f"use ({MAX_FORMAT_WIDTH})")


def _sized(value: Any) -> int | None:
    return len(value) if isinstance(value, str | list | tuple) else None


def _check_binop(operator: str, left: Any, right: Any) -> None:
    """Before the operation: would it build something past the limits?"""
    numbers = all(isinstance(v, int | float) for v in (left, right))
    if operator == "**" and numbers and isinstance(left, int) and isinstance(right, int):
        if right > 0 and abs(left) > 1 and right * abs(left).bit_length() > MAX_INT_BITS:
            raise RuleLimit(f"a power of {right} on a number of {abs(left).bit_length()} bits "
                            f"builds a number over {MAX_INT_BITS} bits")
    elif operator == "*" and numbers:
        if isinstance(left, int) and isinstance(right, int) and (
            left.bit_length() + right.bit_length() > MAX_INT_BITS
        ):
            raise RuleLimit(f"a product would be over {MAX_INT_BITS} bits")
    elif operator in ("*", "+"):
        for sequence, other in ((left, right), (right, left)):
            size = _sized(sequence)
            if size is None:
                continue
            text = isinstance(sequence, str)
            limit, unit = (MAX_STRING, "characters") if text else (MAX_ITEMS, "items")
            built = (size * other if isinstance(other, int) and operator == "*"
                     else size + (_sized(other) or 0))
            if built > limit:
                raise RuleLimit(f"this builds a {'text' if text else 'list'} of {built:,} "
                                f"{unit}; a rule may build up to {limit:,}")
            break
    elif operator == "%":
        _check_format(left)


class _BoundedSandbox(ImmutableSandboxedEnvironment):
    """The immutable sandbox, with sizes, steps and time bounded (see the limits above)."""

    intercepted_binops = frozenset({"*", "**", "%", "+"})

    def call_binop(self, context: Any, operator: str, left: Any, right: Any) -> Any:
        _check_binop(operator, left, right)
        result = super().call_binop(context, operator, left, right)
        _check_text(result, "a text")
        return result

    def tick(self) -> None:
        """Called on entering every block: counts loop passes, watches the clock."""
        budget = _BUDGET.get()
        if budget is None:
            return
        budget.steps += 1
        if budget.steps > MAX_STEPS:
            raise RuleLimit(f"more than {MAX_STEPS:,} loop passes in one evaluation")
        if budget.steps % 256 == 0 and time.monotonic() > budget.deadline:
            raise RuleLimit(f"took longer than {MAX_SECONDS:g} s to evaluate")

    def bounded_join(self, parts: Iterable[Any]) -> str:
        """The '~' operator: join as text, within the size limit."""
        texts = []
        total = 0
        for part in parts:
            text = str(part)
            total += len(text)
            if total > MAX_STRING:
                raise RuleLimit(f"joining with '~' builds a text over {MAX_STRING:,} "
                                "characters")
            texts.append(text)
        return "".join(texts)


class _BoundedCodeGenerator(CodeGenerator):
    """Jinja's code generator with a budget check in every block and a bounded '~'."""

    def blockvisit(self, body: Iterable[nodes.Node], frame: Frame) -> None:
        self.writeline("environment.tick()")
        super().blockvisit(body, frame)

    def visit_Concat(self, node: nodes.Concat, frame: Frame) -> None:
        self.write("environment.bounded_join((")
        for argument in node.nodes:
            self.visit(argument, frame)
            self.write(", ")
        self.write("))")


def _bounded_filters(filters: Mapping[str, Any]) -> dict[str, Any]:
    """The allowed filters, each refusing inputs that would build past the limits."""
    original = {name: filters[name] for name in ALLOWED_FILTERS}
    bounded = dict(original)

    def items_of(value: Any) -> None:
        size = len(value) if hasattr(value, "__len__") else None
        if size is not None and size > MAX_ITEMS:
            raise RuleLimit(f"{size:,} items are more than a rule may list or sort")

    def replace(eval_ctx: Any, value: Any, old: Any, new: Any, count: Any = None) -> Any:
        text, old, new = str(value), str(old), str(new)
        times = text.count(old) if old else len(text) + 1
        if count is not None and isinstance(count, int) and count >= 0:
            times = min(times, count)
        if len(text) + times * (len(new) - len(old)) > MAX_STRING:
            raise RuleLimit(f"replace would build a text over {MAX_STRING:,} characters")
        return original["replace"](eval_ctx, value, old, new, count)

    def join(eval_ctx: Any, value: Any, d: str = "", attribute: Any = None) -> Any:
        items_of(value)
        if attribute is None and isinstance(value, str | list | tuple | dict):
            value = list(value)
            total = 0
            for item in value:  # before joining: the joined text is never built if too long
                total += len(str(item)) + len(str(d))
                if total > MAX_STRING:
                    raise RuleLimit(f"join would build a text over {MAX_STRING:,} characters")
        result = original["join"](eval_ctx, value, d, attribute)
        _check_text(result, "join")
        return result

    def format_(value: Any, *args: Any, **kwargs: Any) -> Any:
        _check_format(value)
        result = original["format"](value, *args, **kwargs)
        _check_text(result, "format")
        return result

    def as_int(value: Any, default: int = 0, base: int = 10) -> Any:
        if isinstance(value, str) and len(value) > 100:
            raise RuleLimit("a number written with more than 100 characters")
        return original["int"](value, default, base)

    def round_(value: Any, precision: int = 0, method: str = "common") -> Any:
        if not isinstance(precision, int) or abs(precision) > MAX_ROUND_DIGITS:
            raise RuleLimit(f"round to at most {MAX_ROUND_DIGITS} digits")
        if isinstance(value, float) and not math.isfinite(value):
            raise RuleLimit("cannot round a number that is not finite")
        return original["round"](value, precision, method)

    def sized(name: str) -> Any:
        def check(*args: Any, **kwargs: Any) -> Any:
            items_of(args[1])  # each takes the environment or context first
            return original[name](*args, **kwargs)

        for attribute in ("jinja_pass_arg",):
            if hasattr(original[name], attribute):
                setattr(check, attribute, getattr(original[name], attribute))
        return check

    for name, wrapper in (("replace", replace), ("join", join), ("format", format_),
                          ("int", as_int), ("round", round_)):
        for attribute in ("jinja_pass_arg",):
            if hasattr(original[name], attribute):
                setattr(wrapper, attribute, getattr(original[name], attribute))
        bounded[name] = wrapper
    for name in ("list", "sort", "max", "min"):
        bounded[name] = sized(name)
    return bounded


def _environment() -> ImmutableSandboxedEnvironment:
    environment = _BoundedSandbox(undefined=StrictUndefined, autoescape=False,
                                  keep_trailing_newline=False)
    environment.code_generator_class = _BoundedCodeGenerator
    environment.globals.clear()
    environment.filters = _bounded_filters(environment.filters)
    environment.tests = {name: environment.tests[name] for name in ALLOWED_TESTS}
    return environment


ENVIRONMENT = _environment()


@dataclass(frozen=True)
class Compiled:
    """A checked expression or template, ready to evaluate."""

    source: str
    mode: Literal["expression", "template"]
    _run: Any

    def __call__(self, context: Mapping[str, Any]) -> Any:
        token = _BUDGET.set(_Budget(deadline=time.monotonic() + MAX_SECONDS))
        try:
            if self.mode == "expression":
                return self._run(**context)
            return self._render(context)
        except OverflowError:
            raise RuleError(f"{_shown(self.source)}: a number too large to compute") from None
        except (UndefinedError, SecurityError, TypeError, ValueError, ArithmeticError,
                LookupError) as e:
            raise RuleError(f"{_shown(self.source)}: {e}") from None
        except RecursionError:
            raise RuleError(f"{_shown(self.source)}: nested too deeply to evaluate") from None
        finally:
            _BUDGET.reset(token)

    def _render(self, context: Mapping[str, Any]) -> str:
        """The template's text, refused as soon as it grows past MAX_STRING."""
        chunks = []
        size = 0
        for chunk in self._run.generate(**context):
            size += len(chunk)
            if size > MAX_STRING:
                raise RuleLimit(f"the text would be over {MAX_STRING:,} characters long")
            chunks.append(chunk)
        return "".join(chunks)


def _shown(source: str, limit: int = 80) -> str:
    """A rule text as quoted in a message: short and on one line."""
    one = " ".join(source.split())
    return repr(one if len(one) <= limit else one[:limit] + "…")


def lint_source(source: str, mode: Literal["expression", "template"],
                schema: Schema) -> list[str]:
    """Everything wrong with a rule text, one message each; empty when it may run."""
    if len(source) > MAX_SOURCE:
        return [f"{len(source):,} characters is longer than a rule text may be "
                f"({MAX_SOURCE:,})"]
    try:
        tree = ENVIRONMENT.parse(_as_template(source, mode))
    except TemplateSyntaxError as error:
        return [f"syntax: {error.message}"]
    except RecursionError:
        return [f"nested more than {MAX_NESTING} levels deep (brackets, operators or "
                "filters inside one another)"]
    if _depth(tree) > MAX_NESTING:
        return [f"nested more than {MAX_NESTING} levels deep (brackets, operators or "
                "filters inside one another)"]
    problems: list[str] = []
    for node in tree.find_all(nodes.Node):
        for refused, why in REFUSED_NODES.items():
            if isinstance(node, refused):
                problems.append(why)
        if isinstance(node, nodes.Getattr) and node.attr.startswith("_"):
            problems.append(f"attribute {node.attr!r} is private: not allowed in a rule")
        if isinstance(node, nodes.Getitem) and isinstance(node.arg, nodes.Const) and (
            isinstance(node.arg.value, str) and node.arg.value.startswith("_")
        ):
            problems.append(f"key {node.arg.value!r} is private: not allowed in a rule")
        if isinstance(node, nodes.Filter) and node.name not in ALLOWED_FILTERS:
            problems.append(f"filter {node.name!r} is not allowed"
                            f"{did_you_mean(node.name, ALLOWED_FILTERS)}")
        if isinstance(node, nodes.Test) and node.name not in ALLOWED_TESTS:
            problems.append(f"test {node.name!r} is not allowed"
                            f"{did_you_mean(node.name, ALLOWED_TESTS)}")
    problems.extend(_unknown_names(tree, schema))
    return sorted(set(problems), key=problems.index)


def _depth(tree: nodes.Node) -> int:
    """Depth of a syntax tree, walked without recursion."""
    deepest = 0
    stack = [(tree, 1)]
    while stack:
        node, depth = stack.pop()
        deepest = max(deepest, depth)
        stack.extend((child, depth + 1) for child in node.iter_child_nodes())
    return deepest


def _as_template(source: str, mode: str) -> str:
    return "{{ (" + source + ") }}" if mode == "expression" else source


def _unknown_names(tree: nodes.Template, schema: Schema) -> Iterator[str]:
    scope = dict(schema)
    local = {n.name for n in tree.find_all(nodes.Name) if n.ctx in ("store", "param")}
    for loop in tree.find_all(nodes.For):
        local.add("loop")  # Jinja's own loop variable (loop.index, loop.last)
        over = _attribute_path(loop.iter)
        listed = _schema_at(over, schema) if over is not None else None
        if isinstance(listed, ListOf) and isinstance(loop.target, nodes.Name):
            scope[loop.target.name] = listed.item  # its items' attributes are checked
            local.discard(loop.target.name)
    for node in tree.find_all((nodes.Getattr, nodes.Name)):
        path = _attribute_path(node)
        if path is None or path[0] in local:
            continue
        if isinstance(node, nodes.Name) and node.ctx != "load":
            continue
        yield from _check_path(path, scope)
    for node in tree.find_all(nodes.Filter):
        yield from _check_attribute_argument(node, scope)


def _attribute_path(node: nodes.Node) -> list[str] | None:
    """['item', 'rated_voltage'] for ``item.rated_voltage``; None for anything else."""
    parts: list[str] = []
    while isinstance(node, nodes.Getattr):
        parts.append(node.attr)
        node = node.node
    if isinstance(node, nodes.Name):
        return [node.name, *reversed(parts)]
    return None


def _schema_at(path: list[str], schema: Schema) -> Any:
    """What ``path`` names in ``schema``; None when it is unknown or a plain value."""
    level: Any = schema
    try:
        for part in path:
            level = level[part]
    except (KeyError, TypeError):  # past a plain value or a list: nothing to say
        return None
    return level


def _check_path(path: list[str], schema: Schema) -> Iterator[str]:
    level: Any = schema
    for depth, part in enumerate(path):
        if level is None:
            return  # a plain value: what lies below is its own business (and calls are off)
        if isinstance(level, ListOf):
            name = ".".join(path[:depth])
            yield (f"{name!r} is a list: loop over it ({{% for one in {name} %}}) or join "
                   f"an attribute of each ({name} | join('; ', attribute='{part}'))")
            return
        if part not in level:
            what = "name" if depth == 0 else "attribute"
            hint = did_you_mean(part, level) or (
                f" (known in {'.'.join(path[:depth]) or 'the context'}: "
                f"{', '.join(sorted(level))})")
            yield f"unknown {what} {'.'.join(path[: depth + 1])!r}{hint}"
            return
        level = level[part]


def _check_attribute_argument(node: nodes.Filter, schema: Schema) -> Iterator[str]:
    """``findings | join('; ', attribute='text')``: the attribute each item must have."""
    over = _attribute_path(node.node) if node.node is not None else None
    listed = _schema_at(over, schema) if over is not None else None
    if not isinstance(listed, ListOf):
        return
    given = [k.value for k in node.kwargs if k.key == "attribute"]
    if node.name == "join" and len(node.args) > 1:
        given.append(node.args[1])
    each = ".".join(over or ()) + "[]"  # named so in the message: "findings[].text"
    for value in given:
        if isinstance(value, nodes.Const) and isinstance(value.value, str):
            yield from _check_path([each, *value.value.split(".")], {each: listed.item})


def compile_source(source: str, mode: Literal["expression", "template"]) -> Compiled:
    """Compile a text that ``lint_source`` passed."""
    run: Any
    if mode == "expression":
        run = ENVIRONMENT.compile_expression(source, undefined_to_none=False)
    else:
        run = ENVIRONMENT.from_string(source)
    return Compiled(source, mode, run)


# --- rule files, checked and compiled -------------------------------------------------------------


@dataclass(frozen=True)
class CompiledReading:
    """A step's call of a named calculation."""

    calc: str
    params: Mapping[str, Compiled]
    judge: bool  # False: recorded against its limits, not what the job is judged by


@dataclass(frozen=True)
class CompiledStep:
    text: Compiled
    when: Compiled | None
    readings: tuple[CompiledReading, ...]
    cautions: tuple[str, ...]
    check_only: bool
    reconnect: Compiled | None = None
    before_isolation: bool = False
    stage: str = "in_service"
    search_outcome: SearchOutcome | None = None


@dataclass(frozen=True)
class CompiledRule:
    id: str
    place: str  # "rules/ground.yaml:12", for errors while applying
    findings: tuple[str, ...]
    routine: tuple[str, ...]
    items: tuple[str, ...]
    one_per: str
    when: Compiled
    title: Compiled
    item: Compiled
    priority: Compiled
    job_kind: str
    clears_ground: bool
    crew: int
    hours: float
    permits: tuple[str, ...]
    isolate: bool
    search_plan: bool
    cautions: tuple[str, ...]
    steps: tuple[CompiledStep, ...]
    acceptance: tuple[Compiled, ...]
    restoration: tuple[CompiledStep, ...]
    instrument_supply: Compiled | None
    defer_when: Compiled | None = None
    defer_reason: Compiled | None = None


@dataclass(frozen=True)
class CompiledCaution:
    id: str
    signal_word: SignalWord
    text: Compiled
    when: Compiled
    automatic: bool
    needs: tuple[str, ...] = ()


@dataclass(frozen=True)
class RuleSet:
    rules: tuple[CompiledRule, ...]
    cautions: Mapping[str, CompiledCaution]



Place = Callable[[tuple[str | int, ...], str], Problem]


def build_ruleset(
    rule_files: Sequence[tuple[RuleFile, Place]],
    library: tuple[CautionLibrary, Place],
    schema_for: Callable[[bool, bool], Schema],
    calculations: Mapping[str, tuple[str, ...]],
) -> RuleSet:
    """Lint every rule and caution, then compile them; all problems at once, located.

    ``rule_files`` holds each file's rules and a function that places a field path in
    that file; ``schema_for(finding, routine)`` says what the
    expressions may name; ``calculations`` maps calculation names to their parameters.
    """
    problems: list[Problem] = []
    caution_models, caution_place = library
    caution_ids = [c.id for c in caution_models.cautions]
    cautions: dict[str, CompiledCaution] = {}
    for index, entry in enumerate(caution_models.cautions):
        base = ("cautions", index)
        if entry.id in cautions:
            problems.append(caution_place((*base, "id"), f"caution {entry.id!r} is defined "
                                                          "twice"))
        # Cautions may be used by any rule: they may name only what every context has.
        common = schema_for(False, False)
        for field_name, mode in (("text", "template"), ("when", "expression")):
            for message in lint_source(getattr(entry, field_name), mode, common):  # type: ignore[arg-type]
                problems.append(caution_place((*base, field_name),
                                              f"caution {entry.id}: {message}"))
        for message in _claims_without_needs(entry.text, entry.needs):
            problems.append(caution_place((*base, "needs"), f"caution {entry.id}: {message}"))
        cautions[entry.id] = CompiledCaution(
            id=entry.id, signal_word=entry.signal_word,
            text=_safe_compile(entry.text, "template"),
            when=_safe_compile(entry.when, "expression"), automatic=entry.automatic,
            needs=entry.needs)
    rules: list[CompiledRule] = []
    seen: dict[str, str] = {}
    for rule_file, place in rule_files:
        for index, rule in enumerate(rule_file.rules):
            base = ("rules", index)
            where = place(base, "").format().split(": ")[0].rstrip(":")
            schema = schema_for(bool(rule.applies_to.findings), bool(rule.applies_to.routine))
            found = _lint_rule(rule, schema, caution_ids, calculations)
            if rule.id in seen:
                found.append((("id",), f"rule id {rule.id!r} is already used at "
                                        f"{seen[rule.id]}"))
            seen.setdefault(rule.id, where)
            problems.extend(place((*base, *path), f"rule {rule.id}: {message}")
                            for path, message in found)
            if not found:
                rules.append(_compile_rule(rule, where))
    if problems:
        raise InputError(problems)
    return RuleSet(rules=tuple(rules), cautions=cautions)


def _safe_compile(source: str, mode: Literal["expression", "template"]) -> Compiled:
    try:
        if len(source) <= MAX_SOURCE:
            return compile_source(source, mode)
    except (TemplateSyntaxError, RecursionError, SyntaxError):
        pass
    return compile_source("false" if mode == "expression" else "", mode)  # linted


# Words in a caution that state a fact about the package, and the fact they need: a
# caution that says "both sides are in the isolation" must only print where they are.
_CLAIMS = (
    (re.compile(r"\bisolation\b|\bisolated\b|\blocked (open|out)\b", re.I), "isolated"),
    (re.compile(r"\bprove[ds]? dead\b|\bproving dead\b", re.I), "proves_dead"),
    (re.compile(r"\binsulation test\b|\btest voltage\b", re.I), "insulation_test"),
)
# Rule texts that would repeat (and could contradict) what the planner writes itself.
_GENERATED = re.compile(r"\blocks?\b.*\b(remove|off)\b|\bremove\b.*\blocks?\b", re.I)
_DISCONNECTS = re.compile(r"\bdisconnect", re.I)


def _claims_without_needs(text: str, needs: Sequence[str]) -> Iterator[str]:
    for pattern, fact in _CLAIMS:
        match = pattern.search(text)
        if match and fact not in needs:
            yield (f"its text says {match.group(0)!r}, which is true only where the "
                   f"package is {fact.replace('_', ' ')}: add '{fact}' to its needs")


# Finding kinds that only make sense on one kind of item.
_FINDING_ITEMS = {"transformer_unit": {"transformer"}, "breaker_tripped": {"device"},
                  "lamps": {"bus"}, "phase_voltages": {"bus"}, "insulation_monitor": {"bus"}}


def _lint_rule(rule: Rule, schema: Schema, caution_ids: Sequence[str],
               calculations: Mapping[str, tuple[str, ...]],
               ) -> list[tuple[tuple[str | int, ...], str]]:
    found: list[tuple[tuple[str | int, ...], str]] = []

    def lint(path: tuple[str | int, ...], source: str,
             mode: Literal["expression", "template"]) -> None:
        for message in lint_source(source, mode, schema):
            found.append((path, message))

    if not rule.applies_to.findings and not rule.applies_to.routine:
        found.append((("applies_to",), "unreachable: it applies to no finding kind and no "
                                       "routine test"))
    if rule.applies_to.items:
        for kind in rule.applies_to.findings:
            possible = _FINDING_ITEMS.get(kind)
            if possible is not None and not possible & set(rule.applies_to.items):
                found.append((("applies_to", "items"),
                              f"unreachable: a {kind} finding is on a "
                              f"{'/'.join(sorted(possible))}, never on "
                              f"{'/'.join(rule.applies_to.items)}"))
    lint(("when",), rule.when, "expression")
    if _constant_false(rule.when):
        found.append((("when",), "unreachable: its condition is always false"))
    lint(("title",), rule.title, "template")
    lint(("item",), item_template(rule), "template")
    lint(("job", "priority"), rule.job.priority, "expression")
    if rule.instrument_supply:
        lint(("instrument_supply",), rule.instrument_supply, "template")
    if rule.defer_when:
        lint(("defer_when",), rule.defer_when, "expression")
        if not rule.defer_reason:
            found.append((("defer_when",), "a rule that can be deferred needs defer_reason: "
                                           "the day plan says why"))
        if not rule.applies_to.routine:
            found.append((("defer_when",), "only routine jobs are deferred: a finding's job "
                                           "is issued or not, by 'when'"))
    if rule.defer_reason:
        lint(("defer_reason",), rule.defer_reason, "template")
    for position, text in enumerate(rule.acceptance):
        lint(("acceptance", position), text, "template")
    for position, caution in enumerate(rule.cautions):
        if caution not in caution_ids:
            found.append((("cautions", position), f"unknown caution {caution!r}"
                                                  f"{did_you_mean(caution, caution_ids)}"))
    for section in ("steps", "restoration"):
        for number, step in enumerate(getattr(rule, section)):
            base: tuple[str | int, ...] = (section, number)
            lint((*base, "text"), step.text, "template")
            if step.when:
                lint((*base, "when"), step.when, "expression")
            found.extend(((*base, *path), message)
                         for path, message in _lint_step_kind(step, section))
            if step.reconnect:
                lint((*base, "reconnect"), step.reconnect, "template")
            for position, caution in enumerate(step.cautions):
                if caution not in caution_ids:
                    found.append(((*base, "cautions", position),
                                  f"unknown caution {caution!r}"
                                  f"{did_you_mean(caution, caution_ids)}"))
            for position, reading in enumerate(step.readings):
                path = (*base, "readings", position)
                if reading.calc not in calculations:
                    found.append(((*path, "calc"), f"unknown calculation {reading.calc!r}"
                                                   f"{did_you_mean(reading.calc, calculations)}"))
                    continue
                wanted = calculations[reading.calc]
                for name, source in reading.params.items():
                    if name not in wanted:
                        found.append(((*path, "params", name),
                                      f"{reading.calc} takes no parameter {name!r}"
                                      f"{did_you_mean(name, wanted)}; it takes "
                                      f"{', '.join(wanted)}"))
                    else:
                        lint((*path, "params", name), source, "template")
                for name in wanted:
                    if name not in reading.params:
                        found.append(((*path, "params"),
                                      f"{reading.calc} needs parameter {name!r}"))
    return found


def _lint_step_kind(step: StepRule, section: str) -> Iterator[tuple[tuple[str, ...], str]]:
    """A work step and a restoration step each use only their own fields; a work step that
    disconnects says how it is put back; a restoration never writes the locks itself."""
    if section == "steps":
        if _DISCONNECTS.search(step.text) and step.reconnect is None:
            yield (("reconnect",), "the step disconnects something: say in 'reconnect' how "
                                   "the restoration puts it back")
        if step.stage != "in_service" or step.search_outcome is not None:
            yield (("stage",), "stage and search_outcome belong to restoration steps")
        return
    if step.reconnect is not None or step.before_isolation:
        yield (("reconnect",), "reconnect and before_isolation belong to work steps")
    if _GENERATED.search(step.text):
        yield (("text",), "the planner writes the removal of locks (one step per lock, in "
                          "reverse order, by whoever applied it) and the energising: leave "
                          "them out of the rule")


def _constant_false(source: str) -> bool:
    try:
        expression = ENVIRONMENT.parse("{{ (" + source + ") }}")
    except (TemplateSyntaxError, RecursionError):
        return False
    output = expression.body[0]
    if not isinstance(output, nodes.Output) or len(output.nodes) != 1:
        return False
    node = output.nodes[0]
    try:
        return isinstance(node, nodes.Expr) and node.as_const() in (False, 0, None, "")
    except (nodes.Impossible, RecursionError):
        return False


def item_template(rule: Rule) -> str:
    """The rule's item, or by default the finding's place or the routine test's element."""
    if rule.item is not None:
        return rule.item
    return "{{ finding.where }}" if rule.applies_to.findings else "{{ item.id }}"


def _compile_step(step: StepRule) -> CompiledStep:
    return CompiledStep(
        text=compile_source(step.text, "template"),
        when=compile_source(step.when, "expression") if step.when else None,
        readings=tuple(CompiledReading(reading.calc,
                                       {name: compile_source(source, "template")
                                        for name, source in reading.params.items()},
                                       reading.judge)
                       for reading in step.readings),
        cautions=step.cautions, check_only=step.check_only,
        reconnect=compile_source(step.reconnect, "template") if step.reconnect else None,
        before_isolation=step.before_isolation, stage=step.stage,
        search_outcome=step.search_outcome)


def _compile_rule(rule: Rule, place: str) -> CompiledRule:
    return CompiledRule(
        id=rule.id, place=place, findings=rule.applies_to.findings,
        routine=tuple(r.value for r in rule.applies_to.routine), items=rule.applies_to.items,
        one_per=rule.one_per, when=compile_source(rule.when, "expression"),
        title=compile_source(rule.title, "template"),
        item=compile_source(item_template(rule), "template"),
        priority=compile_source(rule.job.priority, "expression"), job_kind=rule.job.kind,
        clears_ground=rule.job.clears_ground,
        crew=rule.job.crew, hours=rule.job.hours, permits=rule.job.permits,
        isolate=rule.isolate, search_plan=rule.search_plan, cautions=rule.cautions,
        steps=tuple(_compile_step(s) for s in rule.steps),
        acceptance=tuple(compile_source(text, "template") for text in rule.acceptance),
        restoration=tuple(_compile_step(s) for s in rule.restoration),
        instrument_supply=(compile_source(rule.instrument_supply, "template")
                           if rule.instrument_supply else None),
        defer_when=compile_source(rule.defer_when, "expression") if rule.defer_when else None,
        defer_reason=(compile_source(rule.defer_reason, "template") if rule.defer_reason
                      else None))
