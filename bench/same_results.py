"""`python -m bench.same_results --before COMMIT`: this checkout's expansions against an earlier commit's,
byte for byte, on every labelled query of both demo boards.

For each board, one dump is generated and one bundle trained with the earlier commit; then each
version, in its own interpreter, expands every labelled query of the board and its first 300
entries typed alone, under four sets of options, with and without reviewer decisions, explained
and not, and writes each result's JSON a line. The two files must be identical. A change that is
meant to change no behaviour is shown to change none this way.

    python -m bench.same_results --before f6238a5 --out build/same
"""

from __future__ import annotations

import argparse
import filecmp
import json
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine
from bench.versus import _env, _train, checkout
from demo_postings.generate import generate

__all__ = ["main"]

#: Run inside each version's interpreter: expand every query every way, one JSON result a line.
_DUMP = r"""
import json, sys
from pathlib import Path
try:  # the layout since issue 20
    from widen.decisions.decision import Decision, DecisionSet
    from widen.expansion.cache import ExpansionCache
    from widen.expansion.expand import expand as expand_with
    from widen.expansion.lexicon import Lexicon
    from widen.model.store import Store
    BOOST = "boost_scale"
except ImportError:  # the flat layout before it
    from widen.decisions import Decision, DecisionSet
    from widen.expansion import expand as expand_with
    from widen.lexicon import Lexicon
    from widen.store import Store
    ExpansionCache = None
    BOOST = "original_boost"
store, queries, out = Path(sys.argv[1]), Path(sys.argv[2]), Path(sys.argv[3])
lex = Lexicon(Store(store).open_bundle())
kept = {} if ExpansionCache is None else {"cache": ExpansionCache(lex)}
base = lex.options
qs = [json.loads(line)["query"] for line in queries.open(encoding="utf-8")]
qs += [k.replace("_", " ") for k in lex.keys[:300]]
variants = {
    "served": base,
    "field": base.with_request(places="field"),
    "strict_job": base.with_request(strict=True, match="job", max=3),
    "boost": base.with_request(operator="OR", min_similarity=0.5, **{BOOST: 2.0}),
}
at = "2026-01-01T00:00:00Z"
decided = DecisionSet.from_decisions(5, [
    Decision(1, "staff nurse", "rn", "block", None, "t", None, at),
    Decision(2, "lorry driver", "hgv driver", "block", None, "t", None, at),
    Decision(3, "kitchen porter", "pot wash assistant", "pin", 0.4, "t", None, at),
    Decision(4, "hensby", None, "exempt", None, "t", None, at),
    Decision(5, "care assistant", None, "exempt", None, "t", None, at),
])
with out.open("w", encoding="utf-8") as fh:
    for name, options in variants.items():
        for said in (DecisionSet(), decided):
            for explain in (False, True):
                for q in qs:
                    got = expand_with(lex, said, q, options, explain=explain, **kept)
                    fh.write(got.model_dump_json() + "\n")
print(len(qs))
"""


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--before", required=True, help="the earlier commit")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "same")
    parser.add_argument("--postings", type=int, default=20000)
    args = parser.parse_args()
    out = args.out.resolve()
    commit, before = checkout(args.before, out)
    report: dict[str, Any] = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), "before": commit, "boards": {}}
    for board in ("tollbridge", "oxmere"):
        data, store = out / board / "data", out / board / "store"
        if not (data / "postings.jsonl").is_file():
            generate(data, args.postings, seed=7, board=board)
        print(f"{board}: training with {commit[:10]} ...", file=sys.stderr, flush=True)
        _train(before, data, store, pairs=data / "pairs.tsv")
        files = {}
        for name, source in (("before", before), ("now", ROOT)):
            files[name] = out / board / f"{name}.jsonl"
            done = subprocess.run(
                [sys.executable, "-c", _DUMP, str(store), str(data / "queries.jsonl"), str(files[name])],
                env=_env(source),
                cwd=source,
                capture_output=True,
                text=True,
                check=True,
            )
            queries = int(done.stdout.strip())
        identical = filecmp.cmp(files["before"], files["now"], shallow=False)
        lines = sum(1 for _ in files["now"].open(encoding="utf-8"))
        report["boards"][board] = {"queries": queries, "results_compared": lines, "identical": identical}
        print(f"{board}: {lines} results, identical: {identical}", file=sys.stderr, flush=True)
    (out / "same.json").write_text(json.dumps(report, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(report, indent=2))
    if not all(b["identical"] for b in report["boards"].values()):
        raise SystemExit(1)


if __name__ == "__main__":
    main()
