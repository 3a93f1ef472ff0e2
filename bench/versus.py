"""`make versus`: `widen expand` in-process, this checkout against an earlier commit, side by side.

Each version trains its own bundle on the same demo dump (the bundle a version serves is the one
it trains) and times the same queries: every labelled query of the demo board, as seekers type
them, and the two queries `make bench` times. The versions take turns, three rounds each, in one
run on one machine, so the ratio is read from timings taken under the same load; absolute times on
a shared machine are noisy, the ratio much less. The earlier commit is checked out as a git
worktree under the output folder and imported ahead of the installed package (PYTHONPATH).

    python -m bench.versus --before 909b7d8 --demo build/demo --out build/versus
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

from bench.common import ROOT, machine

__all__ = ["main", "checkout"]

#: Run inside each version's interpreter: load the bundle, warm up, time every query.
_TIMER = r"""
import json, statistics, sys, time
from pathlib import Path
try:  # the layout since issue 20
    from widen.decisions.decision import DecisionSet
    from widen.expansion.cache import ExpansionCache
    from widen.expansion.expand import expand as expand_with
    from widen.expansion.lexicon import Lexicon
    from widen.model.store import Store
except ImportError:  # the flat layout before it
    from widen.decisions import DecisionSet
    from widen.expansion import expand as expand_with
    from widen.lexicon import Lexicon
    from widen.store import Store
    ExpansionCache = None

store, queries_path, rounds = Path(sys.argv[1]), Path(sys.argv[2]), int(sys.argv[3])
lex = Lexicon(Store(store).open_bundle())
options, none = lex.options, DecisionSet()
kept = {} if ExpansionCache is None else {"cache": ExpansionCache(lex)}
def expand(lex, decisions, query, options):
    return expand_with(lex, decisions, query, options, **kept)
def prepare_all():
    try:
        from widen.expansion.expand import prepare
        prepare(lex, kept["cache"], options)
    except ImportError:
        from widen.expansion import prepare
        prepare(lex, options)
queries = [json.loads(line)["query"] for line in queries_path.open(encoding="utf-8")]
logged = (queries_path.parent / "query_log.jsonl").open(encoding="utf-8")
log = list(dict.fromkeys(json.loads(line)["q"] for line in logged))
started = time.perf_counter()
prepare_all()  # as the service does before a bundle serves
prepare_s = time.perf_counter() - started
groups = {"known phrase alone": [], "four segments": []}
for q in log:
    segments = expand(lex, none, q, options).segments
    if len(segments) == 1 and segments[0].kind in ("phrase", "term"):
        groups["known phrase alone"].append(q)
    elif len(segments) == 4:
        groups["four segments"].append(q)
for q in queries:
    expand(lex, none, q, options)  # warm the per-entry memo, as a serving worker would be
def per_query(qs, repeat):
    times = []
    for _ in range(repeat):
        started = time.perf_counter()
        for q in qs:
            expand(lex, none, q, options)
        times.append((time.perf_counter() - started) / len(qs))
    return statistics.median(times) * 1e6
def each_once(qs):
    times = []
    for q in qs:
        started = time.perf_counter()
        expand(lex, none, q, options)
        times.append((time.perf_counter() - started) * 1e6)
    return statistics.median(times)
print(json.dumps({
    "prepare_s": prepare_s,
    "known_phrase_alone_median_us": each_once(groups["known phrase alone"]),
    "four_segments_median_us": each_once(groups["four segments"]),
    "labelled_queries_mean_us": per_query(queries, rounds),
    "known_phrase_median_us": per_query(["staff nurse"], 300 * rounds),
    "multi_segment_median_us": per_query(["night shift staff nurse hensby"], 200 * rounds),
    "queries": len(queries),
}))
"""


def _run(args: list[str], env: dict[str, str] | None = None, cwd: Path = ROOT) -> str:
    done = subprocess.run(args, env=env, cwd=cwd, capture_output=True, text=True)
    if done.returncode not in (0, 3):  # 3: the gate refused the bundle; it is still there to time
        raise SystemExit(f"{' '.join(args[:4])} failed: {done.stderr[-2000:]}")
    return done.stdout


def checkout(before: str, out: Path) -> tuple[str, Path]:
    """The commit `before` names, checked out as a git worktree under `out` (made once): its full hash
    and folder. Code run in that folder with it on PYTHONPATH (`_env`) imports that commit's widen,
    checked here, since `python -m` and `-c` import from the working folder first."""
    out.mkdir(parents=True, exist_ok=True)
    commit = _run(["git", "rev-parse", before]).strip()
    folder = out / f"before-{commit[:10]}"
    if not folder.is_dir():
        _run(["git", "worktree", "add", "--detach", str(folder), commit])
    found = _run([sys.executable, "-c", "import widen; print(widen.__file__)"], _env(folder), folder).strip()
    if not found.startswith(str(folder) + "/"):
        raise SystemExit(f"{folder} imports widen from {found}")
    return commit, folder


def _env(source: Path) -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": str(source)}


def _train(source: Path, demo: Path, store: Path, pairs: Path | None = None) -> None:
    """A bundle of `demo`'s dump trained by the code at `source` (served even if the gate refused it)."""
    if store.is_dir():
        return
    corpus = str(demo / "postings.jsonl")
    # The demo config (gate pairs relative to it) is the same at both commits; read this checkout's,
    # or name the pairs file itself.
    how = ["--pairs", str(pairs)] if pairs else ["--config", str(ROOT / "demo_postings" / "widen.toml")]
    _run(
        [sys.executable, "-m", "widen.cli", "train", "--corpus", corpus, "--store", str(store), *how],
        env=_env(source),
        cwd=source,
    )
    forced = json.loads(
        _run(
            [sys.executable, "-m", "widen.cli", "bundles", "--store", str(store), "--json"],
            env=_env(source),
            cwd=source,
        )
    )
    if not any(b.get("status") == "current" for b in forced):
        _run(
            [sys.executable, "-m", "widen.cli", "promote", forced[-1]["version"], "--store", str(store), "--force"],
            env=_env(source),
            cwd=source,
        )


def _servers(sources: dict[str, Path], store: Path, rounds: int) -> dict[str, Any]:
    """Each version's real server on the same bundle, cache off, under wrk (32 connections): /healthz
    and the fixed query's /v1/expand, the two in turns, the versions in turns; medians of `rounds`."""
    from bench.server import _wrk
    from tests.live_server import live_server

    query = "/v1/expand?q=night+shift+staff+nurse+hensby"
    seen: dict[str, list[tuple[float, float, float]]] = {name: [] for name in sources}
    for turn in range(rounds):
        for name, source in sources.items():
            print(f"server round {turn + 1}: {name}", file=sys.stderr, flush=True)
            with live_server(store, {"PYTHONPATH": str(source), "WIDEN_CACHE_SIZE": "0"}, cwd=source) as server:
                _wrk(f"{server.base}/healthz", 2)  # warm up
                health, expand = _wrk(f"{server.base}/healthz", 6), _wrk(f"{server.base}{query}", 6)
            seen[name].append((health["rps"], expand["rps"], expand["p99_ms"]))
    result: dict[str, Any] = {}
    for name, runs in seen.items():
        ratios = sorted(e / h for h, e, _ in runs)
        result[name] = {
            "ratio_to_healthz": round(statistics.median(ratios), 3),
            "rounds": [[h, e] for h, e, _ in runs],
            "p99_ms": round(statistics.median(p for _, _, p in runs), 2),
        }
    result["now_over_before"] = round(result["now"]["ratio_to_healthz"] / result["before"]["ratio_to_healthz"], 3)
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--before", required=True, help="the earlier commit")
    parser.add_argument("--demo", type=Path, default=ROOT / "build" / "demo")
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "versus")
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--no-server", action="store_true", help="only the in-process timings")
    args = parser.parse_args()
    out = args.out.resolve()
    commit, before = checkout(args.before, out)
    sources = {"before": before, "now": ROOT}
    # One bundle for both, trained by the earlier commit, so the two time the same expansions (a
    # second training run would differ in its vectors: skip-gram with two threads is not repeatable).
    print("training with before ...", file=sys.stderr, flush=True)
    store = out / "store"
    _train(before, args.demo.resolve(), store)
    rounds: dict[str, list[dict[str, float]]] = {name: [] for name in sources}
    for turn in range(args.rounds):
        for name, source in sources.items():
            print(f"round {turn + 1}: {name}", file=sys.stderr, flush=True)
            line = _run(
                [
                    sys.executable,
                    "-c",
                    _TIMER,
                    str(store),
                    str(args.demo.resolve() / "queries.jsonl"),
                    "5",
                ],
                env=_env(source),
                cwd=source,
            )
            rounds[name].append(json.loads(line))
    medians = {
        name: {k: round(statistics.median(r[k] for r in runs), 1) for k in runs[0] if k != "queries"}
        for name, runs in rounds.items()
    }
    report: dict[str, Any] = {
        "machine": machine(),
        "date": time.strftime("%Y-%m-%d"),
        "before": commit,
        "now": _run(["git", "rev-parse", "HEAD"]).strip()
        + (" + uncommitted" if _run(["git", "status", "--short"]) else ""),
        "queries": rounds["now"][0]["queries"],
        "median_us": medians,
        "ratio_now_over_before": {k: round(medians["now"][k] / medians["before"][k], 3) for k in medians["now"]},
        "target": "in-process ratio <= 1.05 and the server's ratio to /healthz >= 0.95x before (issue 20)",
    }
    if not args.no_server:
        report["server_cache_off"] = _servers(sources, store, args.rounds)
    (out / "versus.json").write_text(json.dumps(report, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(report, indent=2))


if __name__ == "__main__":
    main()
