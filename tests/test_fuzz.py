"""Seeded mutation fuzzing of the demo case through the CLI (see tests/fuzzkit.py).

What is checked is a fact of robust software, common practice, no source: whatever a user hands
netopt ends in a clean refusal naming what is wrong (exit 2), a verified plan (exit 0) or an
infeasible verdict (exit 3) — never a traceback, a hang, or a folder overwritten that netopt did not
write. The default budget runs in ``make test``; ``make fuzz`` (marker ``fuzz_long``) runs more.
"""

from __future__ import annotations

import os

import pytest
from fuzzkit import Mutation, folder_digest, judge, mutations, run_cli

SEED = 20261203


def _fuzz(root, count: int, solves: int, verb_for_scenarios: str, seed: int = SEED) -> tuple[list[str], dict[str, int]]:
    failures: list[str] = []
    tally = {"mutations": 0, "refused": 0, "accepted": 0, "solved": 0, "infeasible": 0}
    passed: list[Mutation] = []
    for m in mutations(seed, count, root):
        tally["mutations"] += 1
        if m.verb == "out":
            before = folder_digest(m.guarded)
            o = run_cli(["solve", str(m.case), "--out", str(m.out), "-q"], timeout_s=60)
            if folder_digest(m.guarded) != before:
                failures.append(f"#{m.number} {m.what}: the folder changed")
        else:
            o = run_cli(["check", str(m.case), "-q"], timeout_s=60)
        reason = judge(m, o)
        if reason:
            failures.append(f"#{m.number} {m.what}: {reason}")
        elif o.code == 2:
            tally["refused"] += 1
        elif m.verb == "check":
            tally["accepted"] += 1
            passed.append(m)
    # Accepted mutations are solved (cases with scenarios are run): a case check let through must solve cleanly.
    for m in passed[:solves]:
        out = m.case.parent / "results"
        has_scenarios = (m.case / "scenarios.toml").exists() if m.case.is_dir() else True
        verb = verb_for_scenarios if has_scenarios else "solve"
        o = run_cli([verb, str(m.case), "--out", str(out), "--time-limit", "30", "-q"], timeout_s=600)
        mm = Mutation(m.number, m.what, False, "solve", m.case)
        reason = judge(mm, o, out)
        if reason:
            failures.append(f"#{m.number} {m.what} ({verb}): {reason}")
        tally["infeasible" if o.code == 3 else "solved"] += 1
    return failures, tally


def test_fuzz_demo_case(tmp_path, capsys):
    """300 seeded mutations checked, the first 10 accepted ones solved: no traceback, hang or lost folder."""
    failures, tally = _fuzz(tmp_path, count=300, solves=10, verb_for_scenarios="solve")
    with capsys.disabled():
        print(f"\nfuzz: {tally}")
    assert not failures, f"{len(failures)} of {tally['mutations']} mutations misbehaved:\n" + "\n".join(failures)


@pytest.mark.fuzz_long
def test_fuzz_demo_case_long(tmp_path, capsys):
    """NETOPT_FUZZ_COUNT (default 2,000) mutations, 100 accepted ones solved or run with their scenarios."""
    count = int(os.environ.get("NETOPT_FUZZ_COUNT", "2000"))
    failures, tally = _fuzz(tmp_path, count=count, solves=100, verb_for_scenarios="run", seed=SEED + 1)
    with capsys.disabled():
        print(f"\nfuzz: {tally}")
    assert not failures, f"{len(failures)} of {tally['mutations']} mutations misbehaved:\n" + "\n".join(failures)
