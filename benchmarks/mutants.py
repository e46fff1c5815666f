"""Mutation check of the judgment code and the spill rules: does a test fail when a rule is broken?

    python benchmarks/mutants.py [PER_FILE [SEED]]

Each mutant changes one place of one module (a comparison flipped: < and <=, > and >=, == and !=; an integer
added to or taken from a count raised by one, the usual off-by-one in degrees of freedom; 1 - a replaced by
a, alpha for 1 - alpha; a minus sign dropped; + and - swapped between two variables), is written over the
module, and the module's tests run against it (``TESTS``); a failing run kills the mutant. At most PER_FILE
(default 12) sites per module, drawn with SEED (default 0). It rewrites the modules in place (an editable
install's link keeps pointing there), so it refuses to start unless they are as committed, and restores each
module after its mutants, also when interrupted (Ctrl-C, SIGTERM); after a SIGKILL, `git checkout` them.
"""

from __future__ import annotations

import ast
import os
import random
import signal
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
TESTS = {  # each judgment module and the tests that speak for it
    "engine/selection.py": ["test_order_judgments.py", "test_order_choice_words.py", "test_against_statsmodels.py",
                            "test_order_rule_rates.py"],
    "engine/curve.py": ["test_inverse_prediction.py", "test_check_procedures.py", "test_check_regressions.py",
                        "test_udfs.py"],
    "engine/limits.py": ["test_limits.py", "test_udfs_limits_weighting.py"],
    "engine/diagnostics.py": ["test_check_procedures.py", "test_check_regressions.py", "test_check_rates.py",
                              "test_against_statsmodels.py"],
    "udfs/workbook/spill.py": ["test_refresh_spill.py", "test_refresh.py", "test_refresh_inputs.py",
                               "test_refresh_desktop.py"],
}
FLIPS = {ast.Lt: ast.LtE, ast.LtE: ast.Lt, ast.Gt: ast.GtE, ast.GtE: ast.Gt, ast.Eq: ast.NotEq, ast.NotEq: ast.Eq}


class Mutator(ast.NodeTransformer):
    """Numbers the mutation sites in source order; with ``target`` set, changes that one site only."""

    def __init__(self, target: int | None = None):
        self.sites: list[tuple[int, str]] = []
        self.target = target

    def _site(self, node, words: str) -> bool:
        self.sites.append((node.lineno, words))
        return len(self.sites) - 1 == self.target

    def visit_Compare(self, node):
        self.generic_visit(node)
        for i, op in enumerate(node.ops):
            if type(op) in FLIPS and self._site(node, f"{type(op).__name__} -> {FLIPS[type(op)].__name__}"):
                node.ops[i] = FLIPS[type(op)]()
        return node

    def visit_UnaryOp(self, node):
        self.generic_visit(node)
        if isinstance(node.op, ast.USub) and not isinstance(node.operand, ast.Constant) \
                and self._site(node, "minus sign dropped"):
            return node.operand
        return node

    def visit_BinOp(self, node):
        self.generic_visit(node)
        if isinstance(node.op, (ast.Add, ast.Sub)):
            right, left = node.right, node.left
            if isinstance(right, ast.Constant) and type(right.value) is int \
                    and self._site(node, f"{'+' if isinstance(node.op, ast.Add) else '-'} {right.value} off by one"):
                node.right = ast.Constant(right.value + 1)
            elif isinstance(node.op, ast.Sub) and isinstance(left, ast.Constant) and left.value in (1, 1.0) \
                    and self._site(node, "1 - a -> a"):
                return right
            elif not isinstance(left, ast.Constant) and not isinstance(right, ast.Constant) \
                    and self._site(node, "+ and - swapped"):
                node.op = ast.Sub() if isinstance(node.op, ast.Add) else ast.Add()
        return node


def mutants(source: str) -> list[tuple[int, str]]:
    m = Mutator()
    m.visit(ast.parse(source))
    return m.sites


def mutated(source: str, site: int) -> str:
    return ast.unparse(ast.fix_missing_locations(Mutator(site).visit(ast.parse(source))))


def run(per_file: int = 12, seed: int = 0) -> int:
    if subprocess.run(["git", "diff", "--quiet", "--", *TESTS], cwd=ROOT).returncode != 0:
        print("mutants.py: the modules it mutates differ from the commit; commit or stash first", file=sys.stderr)
        return 2
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(143))  # through the finally below, which restores
    rng = random.Random(seed)
    env = dict(os.environ, PYTHONDONTWRITEBYTECODE="1")
    survivors, total = [], 0
    for module, tests in TESTS.items():
        path = ROOT / module
        original = path.read_text()
        sites = mutants(original)
        chosen = sorted(rng.sample(range(len(sites)), min(per_file, len(sites))))
        try:
            for site in chosen:
                with open(path, "w") as f:  # in place: an editable install's link keeps pointing here
                    f.write(mutated(original, site))
                try:
                    done = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider",
                                           *(f"tests/{t}" for t in tests)], cwd=ROOT, env=env,
                                          capture_output=True, timeout=300)
                    killed = done.returncode != 0
                except subprocess.TimeoutExpired:
                    killed = True
                line, words = sites[site]
                total += 1
                print(f"{module}:{line}: {words}: {'killed' if killed else 'SURVIVED'}", flush=True)
                if not killed:
                    survivors.append(f"{module}:{line}: {words}")
        finally:
            with open(path, "w") as f:
                f.write(original)
    print(f"\n{total - len(survivors)} of {total} mutants killed; survivors:")
    print("\n".join(survivors) or "none")
    return 0


if __name__ == "__main__":
    sys.exit(run(*map(int, sys.argv[1:3])))
