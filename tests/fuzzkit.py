"""A seeded mutation fuzzer over the demo case: what a careless or hostile user might hand netopt.

Each mutation changes one thing in a copy of the demo case (a cell, a header, a row, a file, a
setting, a scenario field, a workbook cell) or points ``--out`` somewhere it must not write, and
:func:`run_cli` runs the CLI on it in this process with a time limit. :func:`judge` states what is
acceptable: a clean refusal (exit 2 with a located message, no traceback), a verified solve (exit 0,
``verified`` in summary.json), or an infeasible verdict (exit 3) — never a traceback, a hang, or a
folder replaced that netopt did not write.

The generator is a plain :class:`random.Random` with a fixed seed, so a failure is reproduced by
its mutation number.
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import math
import random
import shutil
import signal
from dataclasses import dataclass
from pathlib import Path

import openpyxl
import tomllib
from casekit import settings_text

from netopt.cli import main
from netopt.data.writing import toml_value

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"

# --------------------------------------------------------------------------- hostile values

HOSTILE_CELLS: tuple[str, ...] = (
    "",
    " ",
    "-1",
    "0",
    "-0",
    "1e308",
    "1e15",
    "-1e15",
    "nan",
    "inf",
    "-inf",
    "abc",
    "1" + "0" * 400,
    '=HYPERLINK("http://example.invalid","x")',
    "+1+cmd|' /C calc'!A0",
    "@SUM(A1)",
    "DC_X[/bold]",
    "[red]x[/red]",
    "$\\frac$",
    "a\x00b",
    "\U0001f600",
    "x" * 20000,
    " 5 ",
    "1,5",
    "true",
    "yes",
    "2026-12-03",
    "\u200b",
    "<script>alert(1)</script>",
    '"quoted"',
    "a\nb",
    "0.5",
    "1e-300",
    "-0.0001",
    "999999999",
    "CON",
    "../../etc",
)

HOSTILE_TOML: tuple[object, ...] = (
    -1,
    0,
    1,
    2,
    10**30,
    10**400,
    1e308,
    -1e308,
    math.nan,
    math.inf,
    -math.inf,
    "text",
    "",
    True,
    False,
    [1, 2],
    [[1]],
    ["a"],
    {"a": 1},
    0.5,
    1_000_000,
    -0.5,
    "$\\frac$",
    "[/bold]",
    "a/b",
    "\x00",
)


def scenarios_text(doc: dict) -> str:
    """A scenarios document (``{"scenario": [...]}``, possibly mangled) as TOML text."""
    lines = []
    scen = doc.get("scenario")
    for k, v in doc.items():
        if k != "scenario" or not isinstance(v, list) or not all(isinstance(s, dict) for s in v):
            lines.append(f"{toml_value(str(k))} = {toml_value(v)}")
    if isinstance(scen, list) and all(isinstance(s, dict) for s in scen):
        for s in scen:
            lines.append("[[scenario]]")
            changes = s.get("change")
            for k, v in s.items():
                if k == "change" and isinstance(v, list) and v and all(isinstance(c, dict) for c in v):
                    continue
                lines.append(f"{toml_value(str(k))} = {toml_value(v)}")
            if isinstance(changes, list) and changes and all(isinstance(c, dict) for c in changes):
                for c in changes:
                    lines.append("[[scenario.change]]")
                    lines += [f"{toml_value(str(k))} = {toml_value(v)}" for k, v in c.items()]
    return "\n".join(lines) + "\n"


# --------------------------------------------------------------------------- mutations


@dataclass
class Mutation:
    """One change to a copy of the demo case and the command to run on it."""

    number: int
    what: str
    must_refuse: bool  # input netopt must refuse (exit 2), not accept with a guess
    verb: str  # "check" | "solve" | "out"
    case: Path
    out: Path | None = None
    guarded: Path | None = None  # a folder that must be left byte-identical


def _read_csv(path: Path) -> list[list[str]]:
    with path.open(newline="", encoding="utf-8") as f:
        return list(csv.reader(f))


def _write_csv(path: Path, rows: list[list[str]]) -> None:
    with path.open("w", newline="", encoding="utf-8") as f:
        csv.writer(f).writerows(rows)


NEAR_MISS_HEADERS = (str.capitalize, str.upper, lambda n: n + "\u200b", lambda n: "\ufeff" + n)
"""Ways of writing a known column that differ only by case or invisible characters: refused (a byte-order
mark before the file's first header is the file's own and is dropped)."""


def _header_variant(rng: random.Random, name: str, first: bool) -> tuple[str, bool]:
    """A changed header, and whether it is a near miss of ``name`` (which netopt must refuse). Spaces around
    a header are trimmed, so the column is read as itself (common practice, no source)."""
    if rng.random() < 0.6:
        variant = rng.choice(NEAR_MISS_HEADERS)(name)
        return variant, variant != name and not (first and variant == "\ufeff" + name)
    return rng.choice([f" {name} ", name[:-1] if len(name) > 2 else name + "x", name + "s", ""]), False


def _mutate_table(rng: random.Random, case: Path) -> tuple[str, bool]:
    path = rng.choice(sorted(case.glob("*.csv")))
    rows = _read_csv(path)
    op = rng.choice(["cell"] * 8 + ["header", "drop_col", "add_col", "dup_row", "drop_row", "empty", "gone", "bytes"])
    name = path.name
    if op == "cell" and len(rows) > 1:
        r = rng.randrange(1, len(rows))
        c = rng.randrange(len(rows[0]))
        if rng.random() < 0.3:  # a value of another row of the same column (duplicate keys, valid shuffles)
            value = rows[rng.randrange(1, len(rows))][c] if c < len(rows[r]) else ""
        else:
            value = rng.choice(HOSTILE_CELLS)
        while len(rows[r]) <= c:
            rows[r].append("")
        rows[r][c] = value
        _write_csv(path, rows)
        return f"{name} row {r + 1} column {rows[0][c]!r} = {value[:40]!r}", False
    if op == "header":
        c = rng.randrange(len(rows[0]))
        old = rows[0][c]
        rows[0][c], near_miss = _header_variant(rng, old, first=c == 0)
        _write_csv(path, rows)
        return f"{name} header {old!r} -> {rows[0][c]!r}", near_miss
    if op == "drop_col":
        c = rng.randrange(len(rows[0]))
        old = rows[0][c]
        rows = [row[:c] + row[c + 1 :] for row in rows]
        _write_csv(path, rows)
        return f"{name} without column {old!r}", False
    if op == "add_col":
        rows = [row + [rng.choice(["extra", "capacity", "note"]) if i == 0 else "1"] for i, row in enumerate(rows)]
        _write_csv(path, rows)
        return f"{name} with an extra column {rows[0][-1]!r}", False
    if op == "dup_row" and len(rows) > 1:
        r = rng.randrange(1, len(rows))
        rows.insert(r, list(rows[r]))
        _write_csv(path, rows)
        return f"{name} row {r + 1} twice", False
    if op == "drop_row" and len(rows) > 1:
        r = rng.randrange(1, len(rows))
        del rows[r]
        _write_csv(path, rows)
        return f"{name} without row {r + 1}", False
    if op == "empty":
        _write_csv(path, rows[:1] if rng.random() < 0.7 else [])
        return f"{name} emptied", False
    if op == "gone":
        path.unlink()
        return f"{name} removed", False
    data = path.read_bytes()
    cut = rng.randrange(len(data))
    junk = rng.choice([b"\xff\xfe\x00", b"\x00\x00", b"\xc3\x28", b'"', b"\r", b"\x1a"])
    path.write_bytes(data[:cut] + junk + (data[cut:] if rng.random() < 0.7 else b""))
    return f"{name} bytes {junk!r} at {cut}", False


def _unusable(value: object) -> bool:
    """A value no setting can take (too large for a float, not a number, nested): netopt must refuse it."""
    if isinstance(value, float):
        return math.isnan(value)
    if isinstance(value, int) and not isinstance(value, bool):
        return abs(value) > 1e308
    return isinstance(value, dict) or (isinstance(value, list) and any(isinstance(v, list) for v in value))


def _mutate_settings(rng: random.Random, case: Path) -> tuple[str, bool]:
    path = case / "settings.toml"
    settings = tomllib.loads(path.read_text(encoding="utf-8"))
    op = rng.choice(["value"] * 6 + ["drop", "unknown", "syntax", "section"])
    section = rng.choice(sorted(settings))
    if op == "value":
        name = rng.choice(sorted(settings[section]))
        value = rng.choice(HOSTILE_TOML)
        settings[section][name] = value
        what = f"settings [{section}] {name} = {toml_value(value)[:40]}"
        path.write_text(settings_text(settings), encoding="utf-8")
        return what, _unusable(value)

    elif op == "drop":
        name = rng.choice(sorted(settings[section]))
        del settings[section][name]
        what = f"settings without [{section}] {name}"
    elif op == "unknown":
        settings[section][rng.choice(["tme_limit_s", "Mip_Gap", "extra"])] = 1
        what = f"settings [{section}] with an unknown name"
    elif op == "section":
        settings[section] = rng.choice(HOSTILE_TOML)
        what = f"settings section [{section}] replaced by a value"
    else:
        path.write_text(path.read_text(encoding="utf-8") + rng.choice(["\n[solver\n", "\nx = \n", "\n= 1\n"]))
        return "settings.toml with a syntax error", True
    path.write_text(settings_text(settings), encoding="utf-8")
    # a section written as a value is refused; as an inline table it is the section itself
    return what, op == "section" and not isinstance(settings[section], dict)


COLLIDING_NAMES = (("a/b", "a_b"), ("lost [hold]", "lost__hold"), ("A_B", "a_b"), ("x y", "x_y"))
"""Pairs of scenario names that would write the same result folder: netopt must refuse them."""

UNUSABLE_NAMES = ("...", "x\x00y", "", ["a"], 5, "a\nb")
"""Scenario names that make no folder or are not text: refused."""


def _mutate_scenarios(rng: random.Random, case: Path) -> tuple[str, bool]:
    path = case / "scenarios.toml"
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    scen = doc["scenario"]
    i = rng.randrange(len(scen))
    s = scen[i]
    op = rng.choice(["field", "change_field", "change_field", "change_shape", "dup_name", "collide", "kind", "top"])
    must_refuse = True
    if op == "field":
        key = rng.choice(["name", "description", "based_on", "resolve", "frontier_points"])
        s[key] = rng.choice(HOSTILE_TOML + (10**30, 3, "hold", "both", "nope") + UNUSABLE_NAMES)
        what = f"scenario {i + 1} {key} = {toml_value(s[key])[:40]}"
        must_refuse = (key == "name" and s[key] in UNUSABLE_NAMES) or (key == "frontier_points" and s[key] == 10**30)
    elif op == "change_field" and s.get("change"):
        ch = rng.choice(s["change"])
        key = rng.choice(sorted(ch))
        ch[key] = rng.choice(HOSTILE_TOML + ("DC_NOWHERE", "SUP_NINGBO", "closed", "open"))
        what = f"scenario {i + 1} change {ch.get('kind')!r} {key} = {toml_value(ch[key])[:40]}"
        must_refuse = _unusable(ch[key]) or ch[key] == "DC_NOWHERE"
    elif op == "change_shape":
        s["change"] = rng.choice([[1, 2], 5, "site_out", [[1]], [{}], [{"kind": "site_out"}]])
        what = f"scenario {i + 1} change = {toml_value(s['change'])}"
    elif op == "dup_name":
        s["name"] = scen[(i + 1) % len(scen)]["name"]
        what = f"scenario {i + 1} named like the next"
    elif op == "collide":
        s["name"], scen[(i + 1) % len(scen)]["name"] = rng.choice(COLLIDING_NAMES)
        what = f"scenario names {s['name']!r} and {scen[(i + 1) % len(scen)]['name']!r}"
    elif op == "kind" and s.get("change"):
        ch = rng.choice(s["change"])
        if rng.random() < 0.5:
            ch["kind"] = rng.choice(["site_down", "", "SITE_OUT", 1])
        else:
            ch.pop("kind", None)
        what = f"scenario {i + 1} change kind {ch.get('kind')!r}"
    else:
        key = rng.choice(["scenario", "scenarios", "x"])
        doc = {**doc, key: rng.choice(HOSTILE_TOML)}
        what = f"scenarios.toml top-level {key} = {toml_value(doc[key])[:40]}"
    path.write_text(scenarios_text(doc), encoding="utf-8")
    return what, must_refuse


FORMULAS = ("=1+1", "=SUM(B2:B3)")


def _mutate_workbook(rng: random.Random, workbook: Path, target: Path) -> tuple[str, bool]:
    wb = openpyxl.load_workbook(workbook)
    ws = wb[rng.choice(wb.sheetnames)]
    r = rng.randint(1, max(ws.max_row, 1))
    c = rng.randint(1, max(ws.max_column, 1))
    value: object = rng.choice(HOSTILE_CELLS[:20] + FORMULAS + FORMULAS + (1e308, -5, True))
    if isinstance(value, str):
        value = "".join(ch for ch in value if ch >= " " or ch == "\n")  # openpyxl refuses control characters
    ws.cell(row=r, column=c, value=value)
    wb.save(target)
    return (
        f"workbook sheet {ws.title!r} cell {openpyxl.utils.get_column_letter(c)}{r} = {str(value)[:40]!r}",
        value in FORMULAS,  # a formula in a sheet netopt reads is refused: its cached value may be anything
    )


def _out_target(rng: random.Random, root: Path, case: Path) -> tuple[Path, Path, str]:
    """An --out that must be refused, and the folder that must stay byte-identical."""
    kind = rng.choice(["case", "parent", "user", "file"])
    if kind == "case":
        return case, case, "--out is the case folder"
    if kind == "parent":
        return root, root, "--out is the case folder's parent"
    user = root / "documents"
    user.mkdir(exist_ok=True)
    (user / "budget.txt").write_text("my numbers\n")
    if kind == "user":
        return user, user, "--out is a user's folder"
    return user / "budget.txt", user, "--out is a user's file"


def mutations(seed: int, count: int, root: Path) -> list[Mutation]:
    """``count`` seeded mutations of the demo case, each in its own folder under ``root``."""
    rng = random.Random(seed)
    workbook = root / "demo.xlsx"
    run_cli(["export", str(DEMO), "--out", str(workbook), "--xlsx", "-q"], timeout_s=60)
    found = []
    for n in range(count):
        folder = root / f"m{n:04d}"
        case = folder / "case"
        shutil.copytree(DEMO, case)
        kind = rng.choices(["table", "settings", "scenarios", "workbook", "out"], weights=[60, 14, 14, 8, 4])[0]
        if kind != "scenarios":
            (case / "scenarios.toml").unlink()  # a check of the ten scenarios triples its time; fuzzed on their own
        if kind == "table":
            found.append(Mutation(n, *_mutate_table(rng, case), verb="check", case=case))
        elif kind == "settings":
            found.append(Mutation(n, *_mutate_settings(rng, case), verb="check", case=case))
        elif kind == "scenarios":
            found.append(Mutation(n, *_mutate_scenarios(rng, case), verb="check", case=case))
        elif kind == "workbook":
            book = folder / "case.xlsx"
            found.append(Mutation(n, *_mutate_workbook(rng, workbook, book), verb="check", case=book))
        else:
            out, guarded, what = _out_target(rng, folder, case)
            found.append(Mutation(n, what, True, "out", case, out=out, guarded=guarded))
    return found


# --------------------------------------------------------------------------- running and judging


class Hang(BaseException):
    """A run went past its time limit."""


@dataclass
class Outcome:
    code: int | None
    stdout: str
    stderr: str
    error: BaseException | None


def run_cli(argv: list[str], timeout_s: float) -> Outcome:
    """``netopt ARGV`` in this process: exit code, printed text, and any exception that escaped."""

    def _alarm(signum, frame):
        raise Hang(f"no answer within {timeout_s} s")

    out, err = io.StringIO(), io.StringIO()
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, timeout_s)
    code: int | None = None
    error: BaseException | None = None
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            main(argv)
    except SystemExit as e:
        code = e.code if isinstance(e.code, int) else 1
    except BaseException as e:  # a traceback the user would see, or a hang
        error = e
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    return Outcome(code, out.getvalue(), err.getvalue(), error)


def folder_digest(folder: Path) -> str:
    """A hash of every file's path and bytes under ``folder`` (hidden files included)."""
    h = hashlib.sha256()
    for p in sorted(folder.rglob("*")):
        h.update(str(p.relative_to(folder)).encode())
        if p.is_file():
            h.update(p.read_bytes())
    return h.hexdigest()


def judge(m: Mutation, o: Outcome, out: Path | None = None) -> str | None:
    """Why the outcome is unacceptable, or None when it is a clean refusal or a verified answer."""
    if o.error is not None:
        return f"{type(o.error).__name__}: {o.error}"
    if "Traceback" in o.stderr:
        return "traceback printed"
    if o.code == 2:
        if "error" not in o.stderr.lower():
            return "exit 2 without an error message"
        return None
    if m.must_refuse:
        return f"accepted (exit {o.code}) what must be refused"
    if m.verb == "check":
        return None if o.code == 0 else f"check exit {o.code}"
    if o.code == 3:
        return None if o.stderr.strip() or o.stdout.strip() else "infeasible without a word"
    if o.code != 0:
        return f"solve exit {o.code}: {o.stderr[-300:]}"
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8")) if out else {}
    if "base" in summary:  # a run: the base and every scenario row with a plan must be verified
        unverified = [
            r["scenario"] for r in summary["scenarios"] if r.get("total_cost") is not None and not r["verified"]
        ]
        if not summary["base"].get("verified") or unverified:
            return f"run not verified: base {summary['base'].get('verified')}, scenarios {unverified}"
    elif not summary.get("verified"):
        return f"solve not verified: {summary.get('largest_violation_rule')}"
    return None
