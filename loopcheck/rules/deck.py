"""Rule decks: loading a deck (a packaged name or a path), the board's and stages' overrides.

A deck is TOML data (see ``default.toml``): ``[deck]`` with ``name``, ``description``,
``extends`` (another deck this one starts from) and ``not_made_severity``; one ``[rules.NAME]``
table per rule. A measurement rule names the ``quantity`` it judges (``*`` for every
high-current path), the ``direction`` that is bad (``above`` or ``below``) and a limit per
severity (``note``, ``warning``, ``error``); an integrity or project rule carries a ``severity``.
Tables merge key by key: a deck that extends another, a board's ``[rules.thresholds.NAME]`` and a
stage's ``[rules.stage_thresholds.STAGE.NAME]`` change only the keys they give.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, replace
from fnmatch import fnmatchcase
from importlib import resources
from importlib.resources.abc import Traversable
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..findings import SEVERITIES
from ..measure import QUANTITIES, base_quantity
from .docs import RULE_DOCS

KINDS = ("measurement", "integrity", "project")
DIRECTIONS = ("above", "below")
LEVELS = ("note", "warning", "error")          # least severe first
_RULE_KEYS = {"kind", "quantity", "direction", "note", "warning", "error", "severity", "source",
              "enabled"}
_OVERRIDE_KEYS = {"note", "warning", "error", "severity", "enabled"}
_DECK_KEYS = {"name", "description", "extends", "not_made_severity"}
_MAX_EXTENDS = 8


@dataclass(frozen=True)
class Rule:
    """One rule as the active deck (and the project file) set it."""

    name: str
    kind: str                                  # "measurement" | "integrity" | "project"
    quantity: str | None = None                # "hot_loop.area", "path.*.temperature_rise"
    direction: str | None = None               # "above" | "below"
    limits: dict[str, float] = field(default_factory=dict)   # severity -> limit
    severity: str | None = None                # integrity and project rules
    source: str = ""                           # "common practice", a standard ...
    enabled: bool = True
    origin: str = ""                           # where the limits were last set

    def judges(self, quantity: str) -> bool:
        return self.kind == "measurement" and self.quantity is not None and \
            fnmatchcase(quantity, self.quantity)

    def judge(self, value: float) -> tuple[str | None, float | None]:
        """The most severe level ``value`` passes, and that level's limit; (None, None) if none.

        "above": value > limit fails; "below": value < limit fails (equal to the limit passes).
        """
        for level in reversed(LEVELS):
            limit = self.limits.get(level)
            if limit is None:
                continue
            if (self.direction == "above" and value > limit) or \
                    (self.direction == "below" and value < limit):
                return level, limit
        return None, None

    def limits_text(self, unit: str = "") -> str:
        """``"warning > 50, error > 150 mm2"``: the limits in words (for listings)."""
        if self.kind != "measurement":
            return self.severity or ""
        sign = ">" if self.direction == "above" else "<"
        parts = [f"{lvl} {sign} {_num(self.limits[lvl])}" for lvl in LEVELS if lvl in self.limits]
        text = ", ".join(parts)
        return f"{text} {unit}".rstrip() if unit else text


@dataclass
class Deck:
    name: str
    path: str                                    # the deck file (packaged decks: their file)
    description: str
    rules: dict[str, Rule]
    not_made_severity: str = "note"
    stage_rules: dict[str, dict[str, Rule]] = field(default_factory=dict)   # stage -> rule -> Rule
    project_path: str | None = None

    def rule(self, name: str, stage: str | None = None) -> Rule:
        """The rule as it applies on ``stage`` (a stage override wins over the board's)."""
        if stage is not None and name in self.stage_rules.get(stage, {}):
            return self.stage_rules[stage][name]
        return self.rules[name]

    @property
    def measurement_rules(self) -> list[Rule]:
        return [r for r in self.rules.values() if r.kind == "measurement"]


def deck_folder() -> Traversable:
    """Where the shipped decks are: the project's top-level ``rules/`` folder in a source
    checkout (users read and copy them there), else the installed data package
    ``loopcheck.decks`` that setup.py maps to that same folder (one copy in the repository)."""
    checkout = Path(__file__).resolve().parents[2]
    if (checkout / "pyproject.toml").is_file() and (checkout / "rules" / "default.toml").is_file():
        return checkout / "rules"
    return resources.files("loopcheck.decks")


def packaged_decks() -> list[str]:
    """Names of the decks shipped with loopcheck."""
    return sorted(p.name[:-5] for p in deck_folder().iterdir() if p.name.endswith(".toml"))


def load_deck(name_or_path: str | Path | None = None, project: Any = None) -> Deck:
    """A deck by packaged name or file path, with the project's overrides applied.

    ``name_or_path`` None: the deck named in the project file (``[rules] deck``), else "default".
    A relative path named in the project file is taken relative to that file. The project's
    waivers are checked here too (unknown rule names are an error). Raises InputError.
    """
    project_path = str(project.path) if project is not None and project.path else None
    base_dir = None
    if name_or_path is None:
        spec = getattr(getattr(project, "rules", None), "deck", None) or "default"
        name_or_path = spec
        if project_path:
            base_dir = Path(project_path).parent
    deck = _load_deck_file(str(name_or_path), base_dir, depth=0)
    if project is not None:
        deck = _apply_project(deck, project, project_path or "loopcheck.toml")
        _check_waivers(project, project_path or "loopcheck.toml")
    return deck


# --- reading deck files ---

def _resolve(spec: str, base_dir: Path | None) -> tuple[str, str]:
    """(display path, text) of a deck given by name or path."""
    looks_like_path = spec.endswith(".toml") or "/" in spec or "\\" in spec
    if not looks_like_path:
        res = deck_folder().joinpath(f"{spec}.toml")
        if res.is_file():
            return f"rules/{spec}.toml", res.read_text(encoding="utf-8")
        known = ", ".join(packaged_decks())
        raise InputError(f"no rule deck named '{spec}' (packaged decks: {known}; or give a path "
                         "to a .toml file)")
    path = Path(spec)
    if not path.is_absolute() and base_dir is not None:
        path = base_dir / path
    if not path.is_file():
        raise InputError("rule deck file not found", path=str(path))
    try:
        return str(path), path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read rule deck: {exc}", path=str(path)) from None


def _load_deck_file(spec: str, base_dir: Path | None, depth: int) -> Deck:
    if depth > _MAX_EXTENDS:
        raise InputError(f"rule deck '{spec}': 'extends' chain deeper than {_MAX_EXTENDS} "
                         "(a deck that extends itself?)")
    path, text = _resolve(spec, base_dir)
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError) as exc:    # ValueError: an integer of over 4300 digits
        raise _toml_error(exc, path) from None
    unknown = set(data) - {"deck", "rules"}
    if unknown:
        raise InputError(f"unknown top-level key '{sorted(unknown)[0]}' (expected [deck] and "
                         "[rules.NAME] tables)", path=path)
    head = _table(data.get("deck", {}), "deck", path)
    bad = set(head) - _DECK_KEYS
    if bad:
        raise InputError(f"deck: unknown key '{sorted(bad)[0]}'", path=path)

    parent: Deck | None = None
    if "extends" in head:
        ext = _string(head["extends"], "deck.extends", path)
        parent = _load_deck_file(ext, Path(path).parent if "/" in path else None, depth + 1)
    rules: dict[str, Rule] = dict(parent.rules) if parent else {}
    for name, table in _table(data.get("rules", {}), "rules", path).items():
        key = f"rules.{name}"
        table = _table(table, key, path)
        _known_rule(name, key, path)
        bad = set(table) - _RULE_KEYS
        if bad:
            raise InputError(f"{key}: unknown key '{sorted(bad)[0]}' (allowed: "
                             f"{', '.join(sorted(_RULE_KEYS))})", path=path)
        rules[name] = _merge_rule(rules.get(name), name, table, key, path,
                                  origin=f"deck {Path(path).name}")
    nms = head.get("not_made_severity", parent.not_made_severity if parent else "note")
    nms = _severity(nms, "deck.not_made_severity", path)
    name = _string(head.get("name", Path(path).stem), "deck.name", path)
    desc = _string(head.get("description", parent.description if parent else ""),
                   "deck.description", path)
    return Deck(name=name, path=path, description=desc, rules=rules, not_made_severity=nms)


def _merge_rule(old: Rule | None, name: str, table: dict, key: str, path: str,
                origin: str, overrides_only: bool = False) -> Rule:
    """Apply one TOML table to a rule (None: a new rule) and validate the result."""
    if overrides_only:
        bad = set(table) - _OVERRIDE_KEYS
        if bad:
            raise InputError(f"{key}: unknown key '{sorted(bad)[0]}' (allowed: "
                             f"{', '.join(sorted(_OVERRIDE_KEYS))})", path=path)
    limits = dict(old.limits) if old else {}
    for level in LEVELS:
        if level in table:
            limits[level] = _number(table[level], f"{key}.{level}", path)
    kind = table.get("kind", old.kind if old else None)
    if kind is None:
        if "quantity" not in table:
            raise InputError(f"{key}: a new rule needs the quantity it judges (quantity = "
                             "\"...\") or kind = \"integrity\" / \"project\"", path=path)
        kind = "measurement"
    if kind not in KINDS:
        raise InputError(f"{key}.kind: expected one of {', '.join(KINDS)}, got {kind!r}",
                         path=path)
    rule = Rule(
        name=name,
        kind=kind,
        quantity=table.get("quantity", old.quantity if old else None),
        direction=table.get("direction", old.direction if old else None),
        limits=limits,
        severity=table.get("severity", old.severity if old else None),
        source=table.get("source", old.source if old else ""),
        enabled=table.get("enabled", old.enabled if old else True),
        origin=origin if (set(table) & set(LEVELS) or "severity" in table or old is None)
        else old.origin,
    )
    if not isinstance(rule.enabled, bool):
        raise InputError(f"{key}.enabled: expected true or false, got {rule.enabled!r}", path=path)
    if not isinstance(rule.source, str):
        raise InputError(f"{key}.source: expected a string", path=path)
    if rule.kind == "measurement":
        q = rule.quantity
        if not isinstance(q, str) or not q:
            raise InputError(f"{key}.quantity: a measurement rule needs the quantity it judges",
                             path=path)
        if base_quantity(q.replace("*", "input")) not in QUANTITIES:
            raise InputError(f"{key}.quantity: unknown quantity '{q}'", path=path)
        if rule.direction not in DIRECTIONS:
            raise InputError(f"{key}.direction: expected 'above' or 'below', got "
                             f"{rule.direction!r}", path=path)
        if not rule.limits:
            raise InputError(f"{key}: a measurement rule needs at least one of note, warning, "
                             "error", path=path)
        if rule.severity is not None:
            raise InputError(f"{key}.severity: a measurement rule takes limits per severity "
                             "(note/warning/error), not one severity", path=path)
        ordered = [rule.limits[lv] for lv in LEVELS if lv in rule.limits]
        sign = 1 if rule.direction == "above" else -1
        if any(sign * (b - a) < 0 for a, b in zip(ordered, ordered[1:])):
            want = "rise" if rule.direction == "above" else "fall"
            levels = ", ".join(f"{lv} {_num(rule.limits[lv])}" for lv in LEVELS
                               if lv in rule.limits)
            raise InputError(f"{key}: limits must {want} from note to warning to error for a "
                             f"rule that flags values {rule.direction} them ({levels})", path=path)
    else:
        if limits:
            raise InputError(f"{key}: an {rule.kind} rule takes a severity, not limits",
                             path=path)
        _severity(rule.severity, f"{key}.severity", path)
    return rule


def _apply_project(deck: Deck, project: Any, ppath: str) -> Deck:
    spec = getattr(project, "rules", None)
    if spec is None:
        return deck
    rules = dict(deck.rules)
    for name, table in (spec.thresholds or {}).items():
        key = f"rules.thresholds.{name}"
        _known_rule(name, key, ppath)
        table = _table(table, key, ppath)
        if name not in rules:
            raise InputError(f"{key}: the deck '{deck.name}' has no rule '{name}'", path=ppath)
        rules[name] = _merge_rule(rules[name], name, table, key, ppath,
                                  origin="loopcheck.toml [rules.thresholds]", overrides_only=True)
    stage_rules: dict[str, dict[str, Rule]] = {}
    for stage, per_rule in (spec.stage_thresholds or {}).items():
        per_rule = _table(per_rule, f"rules.stage_thresholds.{stage}", ppath)
        for name, table in per_rule.items():
            key = f"rules.stage_thresholds.{stage}.{name}"
            _known_rule(name, key, ppath)
            if name not in rules:
                raise InputError(f"{key}: the deck '{deck.name}' has no rule '{name}'",
                                 path=ppath)
            table = _table(table, key, ppath)
            stage_rules.setdefault(stage, {})[name] = _merge_rule(
                rules[name], name, table, key, ppath,
                origin=f"loopcheck.toml [rules.stage_thresholds.{stage}]", overrides_only=True)
    return replace(deck, rules=rules, stage_rules=stage_rules, project_path=ppath)


def _check_waivers(project: Any, ppath: str) -> None:
    for i, w in enumerate(getattr(project, "waivers", None) or []):
        key = f"waivers[{i}]"
        if not isinstance(w.rule, str) or w.rule not in RULE_DOCS:
            _known_rule(str(w.rule), f"{key}.rule", ppath)
        if w.rule in ("unused-waiver",):
            raise InputError(f"{key}.rule: '{w.rule}' cannot be waived; remove the unused "
                             "waiver instead", path=ppath)
        if not isinstance(w.where, str) or not w.where.strip():
            raise InputError(f"{key}.where: give a stage name, a terminal (RS1.2), a component "
                             "reference or a net name", path=ppath)
        if not isinstance(w.reason, str) or not w.reason.strip():
            raise InputError(f"{key}.reason: a waiver needs a reason", path=ppath)


def _toml_error(exc: Exception, path: str) -> InputError:
    """A TOML syntax error as an InputError with the line (Python 3.11 puts it in the text)."""
    import re

    text = str(exc)
    line = getattr(exc, "lineno", None)
    found = re.search(r"\s*\(at line (\d+), column \d+\)", text)
    if found:
        line = line or int(found.group(1))
        text = text[:found.start()] + text[found.end():]
    return InputError(f"not valid TOML: {text}", path=path, line=line)


# --- small validators: each error names the file and the key ---

def _known_rule(name: str, key: str, path: str) -> None:
    if name in RULE_DOCS:
        return
    import difflib

    close = difflib.get_close_matches(name, list(RULE_DOCS), n=1)
    hint = f" (did you mean '{close[0]}'?)" if close else " (see `loopcheck rules`)"
    raise InputError(f"{key}: unknown rule '{name}'{hint}", path=path)


def _table(value: Any, key: str, path: str) -> dict:
    if not isinstance(value, dict):
        raise InputError(f"{key}: expected a table, got {type(value).__name__}", path=path)
    return value


def _number(value: Any, key: str, path: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{key}: expected a finite number, got {value!r}", path=path)
    try:
        number = float(value)          # a TOML integer has no size limit
    except OverflowError:
        raise InputError(f"{key}: number out of range ({len(str(abs(value)))} digits)", path=path) from None
    if not math.isfinite(number):
        raise InputError(f"{key}: expected a finite number, got {value!r}", path=path)
    return number


def _string(value: Any, key: str, path: str) -> str:
    if not isinstance(value, str):
        raise InputError(f"{key}: expected a string, got {value!r}", path=path)
    return value


def _severity(value: Any, key: str, path: str) -> str:
    if value not in SEVERITIES:
        raise InputError(f"{key}: expected one of {', '.join(SEVERITIES)}, got {value!r}",
                         path=path)
    return value


def _num(x: float) -> str:
    return f"{x:g}"
