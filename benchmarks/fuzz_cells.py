"""Random calls of the worksheet functions (tests/random_cells.py, fixed seeds), directly and through xlwings'
own desktop and browser code: how many results are tables, messages, or "internal error" (which must be none).

    python benchmarks/fuzz_cells.py [DIRECT_CALLS [RUNTIME_CALLS]]
"""

import collections
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import degreewise  # noqa: E402
import xlwings_runtimes as rt  # noqa: E402
from random_cells import as_com, as_js, internal, random_calls  # noqa: E402


def kind(result) -> str:
    if internal(result):
        return "internal error"
    if isinstance(result, list) and (len(result) > 1 or len(result[0]) > 1):
        return "table"
    return "one cell"


def main(direct: int = 20000, runtime: int = 1000) -> int:
    counts = collections.Counter()
    for name, args in random_calls(direct, seed=1):
        result = getattr(degreewise, name)(*args)
        counts["direct", kind(result)] += 1
        if internal(result):
            print(name, result)
    calls = random_calls(runtime, seed=2)
    for where, results in (("desktop", rt.desktop(as_com(calls))["results"]),
                           ("browser", rt.browser(as_js(calls))["results"])):
        for (name, _), result in zip(calls, results):
            counts[where, kind(result)] += 1
            if internal(result):
                print(where, name, result)
    for key in sorted(counts):
        print(*key, counts[key])
    return 1 if any(k[1] == "internal error" for k in counts) else 0


if __name__ == "__main__":
    sys.exit(main(*map(int, sys.argv[1:])))
