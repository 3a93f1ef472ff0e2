"""The `widen` command: one entry point, one subcommand per job.

Exit codes (the nightly job relies on them): 0 done (for train: published),
1 failure, 2 bad input (corpus, config or arguments), 3 refused by the gate.
"""

from __future__ import annotations

import argparse
import json
import logging
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from pydantic import ValidationError

from service.decisions import DecisionError, DecisionStore
from service.expansion import ExpansionOptions, Lexicon, expand
from service.result import ExpansionResult
from training.bundle import BundleError, Store, StoreBusy, open_bundle
from training.config import ConfigError, load_config
from training.pipeline import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, BadInput, summary, train

__all__ = ["main"]

Handler = Callable[[argparse.Namespace], int]


class _Formatter(argparse.RawDescriptionHelpFormatter):
    pass


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="widen",
        description="Query expansion for job-posting search: learn neighbour phrases from your postings "
        "and turn a seeker's phrase into boosted query fragments.",
        formatter_class=_Formatter,
        epilog="examples:\n  widen train --corpus build/demo/postings.jsonl --store build/store\n"
        "  widen bundles --store build/store\n",
    )
    parser.add_argument("-v", "--verbose", action="store_true", help="log library messages too")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    p = sub.add_parser(
        "train",
        help="learn a bundle from a postings dump and publish it if the gate passes",
        formatter_class=_Formatter,
        description="Read a dump of postings (JSON Lines or CSV, plain or gzip), mine phrases, fit skip-gram "
        "embeddings, precompute neighbours, score the gate and publish a new bundle.\n"
        "Exit codes: 0 published, 1 failure, 2 bad input, 3 refused by the gate (kept as rejected).",
        epilog="examples:\n"
        "  widen train --corpus build/demo/postings.jsonl --store build/store --config demo_postings/widen.toml\n"
        "  widen train --corpus /data/dumps/tollbridge-2026-11-30.jsonl.gz --store /srv/widen --force\n"
        "  widen train --print-config > widen.toml",
    )
    p.add_argument("--corpus", type=Path, help="the postings dump")
    p.add_argument("--store", type=Path, help="the store folder (created if missing)")
    p.add_argument("--config", type=Path, help="TOML config; every key has a default (see --print-config)")
    p.add_argument("--pairs", type=Path, help="gate pairs file, overriding gate.pairs of the config")
    p.add_argument("--force", action="store_true", help="promote even if the gate refuses (recorded as forced)")
    p.add_argument("--print-config", action="store_true", help="print the effective config as TOML and stop")
    p.set_defaults(handler=_train)

    p = sub.add_parser(
        "bundles",
        help="list the bundles of a store with status and gate score",
        formatter_class=_Formatter,
        epilog="examples:\n  widen bundles --store build/store\n  widen bundles --store build/store --json",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--json", action="store_true", help="JSON output")
    p.set_defaults(handler=_bundles)

    p = sub.add_parser(
        "promote",
        help="make a bundle the serving one",
        formatter_class=_Formatter,
        epilog="examples:\n  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store\n"
        "  widen promote 20261130T021500123456Z-3f2a1c9d --store build/store --force  # a rejected one",
    )
    p.add_argument("version")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--force", action="store_true", help="allow a bundle that the gate refused")
    p.set_defaults(handler=_promote)

    p = sub.add_parser(
        "rollback",
        help="return to the bundle that served before the current one",
        formatter_class=_Formatter,
        epilog="examples:\n  widen rollback --store build/store",
    )
    p.add_argument("--store", type=Path, required=True)
    p.set_defaults(handler=_rollback)

    p = sub.add_parser(
        "serve",
        help="serve the expansion API over HTTP",
        formatter_class=_Formatter,
        description="Every setting can also come from the environment (WIDEN_STORE, WIDEN_PORT, "
        "WIDEN_ADMIN_TOKEN, ...; see the README). Binds 127.0.0.1 unless told otherwise.",
        epilog="examples:\n  widen serve --store build/store\n"
        "  WIDEN_ADMIN_TOKEN=s3cret widen serve --store /srv/widen/store --host 0.0.0.0 --port 8080 --workers 2",
    )
    p.add_argument("--store", type=Path)
    p.add_argument("--host")
    p.add_argument("--port", type=int)
    p.add_argument("--workers", type=int)
    p.add_argument("--demo-index", type=Path, metavar="POSTINGS", help="also serve the demo search page over this dump")
    p.set_defaults(handler=_serve)

    p = sub.add_parser(
        "expand",
        help="show what a query expands to with the current bundle and the reviewer decisions",
        formatter_class=_Formatter,
        epilog="examples:\n  widen expand 'lorry driver' --store build/store\n"
        "  widen expand 'night shift staff nurse hensby' --store build/store --explain\n"
        "  widen expand '\"class 1 driver\"' --store build/store --json --max 3",
    )
    p.add_argument("query")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--bundle", help="a bundle version other than the current one")
    p.add_argument("--json", action="store_true", help="the result as JSON (the API's result model)")
    p.add_argument("--explain", action="store_true", help="also list the dropped neighbours and why")
    p.add_argument("--max", type=int, help="at most this many expansions a segment (default 5)")
    p.add_argument("--min-similarity", type=float, help="drop neighbours below this cosine (default 0.7)")
    p.add_argument("--strict", action="store_true", help="leave out neighbours hinted as a related, different job")
    p.set_defaults(handler=_expand)

    p = sub.add_parser(
        "evaluate",
        help="measure what expansion does to search results on labelled queries (tantivy BM25)",
        formatter_class=_Formatter,
        description="Index the postings with tantivy (once per dump), run every labelled query as the "
        "front end does today (the seeker's words only) and expanded (query_text), and report recall@k, "
        "nDCG@10, MRR and the exact-first rate, per family and for the ten queries that lost most.",
        epilog="examples:\n  widen evaluate --store build/store --postings build/demo/open_postings.jsonl "
        "--queries build/demo/queries.jsonl --out build/eval",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--postings", type=Path, required=True, help="the dump the index is built from")
    p.add_argument("--queries", type=Path, required=True, help="labelled queries, JSON Lines")
    p.add_argument("--out", type=Path, required=True, help="folder for report.json, report.md, runs, plots")
    p.add_argument("--k", default="10,100", help="recall cut-offs, comma separated (default 10,100)")
    p.add_argument(
        "--baseline-boost",
        type=float,
        default=10.0,
        help="the expanded query is (baseline)^B OR (query_text); 0 sends query_text alone (default 10)",
    )
    p.set_defaults(handler=_evaluate)

    p = sub.add_parser(
        "decide",
        help="record a reviewer decision: block, pin, never, or undo one",
        formatter_class=_Formatter,
        description="Decisions apply at query time at once, without a retrain, and survive retrains.",
        epilog="examples:\n"
        "  widen decide block 'staff nurse' 'care' --store build/store --reviewer ana --note 'not a job title'\n"
        "  widen decide pin 'rn' 'staff nurse' --weight 0.45 --store build/store --reviewer ana\n"
        "  widen decide never 'hensby' --store build/store --reviewer ana\n"
        "  widen decide undo 3 --store build/store --reviewer ana",
    )
    p.add_argument("action", choices=["block", "pin", "never", "undo"])
    p.add_argument("target", help="the phrase (for undo: the decision id)")
    p.add_argument("neighbour", nargs="?", help="the neighbour phrase (block and pin)")
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--reviewer", required=True, help="who decides (recorded)")
    p.add_argument("--note", help="why (recorded)")
    p.add_argument("--weight", type=float, help="pin: the boost, above 0 and below 1")
    p.set_defaults(handler=_decide)

    p = sub.add_parser(
        "decisions",
        help="list, export or import the reviewer decisions of a store",
        formatter_class=_Formatter,
        epilog="examples:\n  widen decisions --store build/store\n  widen decisions --store build/store --json\n"
        "  widen decisions --store build/store --export decisions.json\n"
        "  widen decisions --store /srv/widen/store --import decisions.json --reviewer ana",
    )
    p.add_argument("--store", type=Path, required=True)
    p.add_argument("--json", action="store_true")
    p.add_argument("--all", action="store_true", help="include withdrawn decisions")
    p.add_argument("--export", type=Path, metavar="FILE", help="write the active decisions as JSON")
    p.add_argument("--import", dest="import_file", type=Path, metavar="FILE", help="add the decisions of an export")
    p.add_argument("--reviewer", help="with --import: who imports (recorded)")
    p.set_defaults(handler=_decisions)
    return parser


def _serve(args: argparse.Namespace) -> int:
    import os

    from service.settings import Settings

    # Flags become WIDEN_* variables so that every worker process reads the same settings.
    for flag, name in (
        ("store", "STORE"),
        ("host", "HOST"),
        ("port", "PORT"),
        ("workers", "WORKERS"),
        ("demo_index", "DEMO_INDEX"),
    ):
        value = getattr(args, flag)
        if value is not None:
            os.environ[f"WIDEN_{name}"] = str(value.resolve() if isinstance(value, Path) else value)
    settings = Settings()
    if not settings.store.is_dir():
        raise BadInput(f"no store at {settings.store} (train one first: widen train --corpus ... --store ...)")
    base = f"http://{settings.host}:{settings.port}"
    print(f"widen serving {settings.store} with {settings.workers} worker(s)")
    print(f"  API           {base}/v1/expand?q=lorry+driver")
    print(f"  OpenAPI       {base}/openapi.json  (browsable at {base}/docs)")
    print(f"  health        {base}/healthz  {base}/readyz  {base}/metrics")
    mode = "decisions need WIDEN_REVIEW_TOKEN" if settings.review_token is None else "review token set"
    print(f"  review        {base}/debug?q=lorry+driver  ({mode})")
    if settings.demo_index is not None:
        print(f"  demo search   {base}/demo")
    sys.stdout.flush()
    # Hand the process over to uvicorn: with several workers its supervisor then holds none of
    # widen's libraries, only the workers do (each loads the app from WIDEN_* variables).
    command = [sys.executable, "-m", "uvicorn", "service.app:app_from_environment", "--factory"]
    command += ["--host", settings.host, "--port", str(settings.port), "--workers", str(settings.workers)]
    command += ["--log-level", "warning", "--no-access-log"]
    os.execv(sys.executable, command)
    return EXIT_OK  # pragma: no cover - execv does not return


def _expand(args: argparse.Namespace) -> int:
    store = Store(args.store)
    lexicon = Lexicon(open_bundle(store, args.bundle))
    overrides: dict[str, object] = {"explain": args.explain, "strict": args.strict}
    if args.max is not None:
        overrides["max_per_segment"] = args.max
    if args.min_similarity is not None:
        overrides["min_similarity"] = args.min_similarity
    try:
        options = ExpansionOptions.model_validate(overrides)
    except ValidationError as exc:
        raise BadInput(str(exc.errors()[0]["msg"]) + f" ({exc.errors()[0]['loc'][0]})") from exc
    result = expand(lexicon, DecisionStore(store.decisions_path).snapshot(), args.query, options)
    if args.json:
        print(result.model_dump_json(indent=2, exclude_none=True))
        return EXIT_OK
    print(render_table(result))
    return EXIT_OK


def _evaluate(args: argparse.Namespace) -> int:
    from service.evaluation import evaluate, read_queries, write_report
    from service.search_index import SearchIndex

    try:
        ks = sorted({int(k) for k in args.k.split(",") if k.strip()})
    except ValueError as exc:
        raise BadInput(f"--k takes whole numbers separated by commas, not {args.k!r}") from exc
    if not ks or min(ks) < 1 or max(ks) > 100:
        raise BadInput("--k values must lie in 1..100 (runs are 100 deep)")
    for path in (args.postings, args.queries):
        if not path.is_file():
            raise BadInput(f"not found: {path}")
    store = Store(args.store)
    lexicon = Lexicon(open_bundle(store))
    try:
        queries = read_queries(args.queries)
    except ValueError as exc:
        raise BadInput(str(exc)) from exc
    print(f"indexing {args.postings} (reused when the dump is unchanged) ...", file=sys.stderr)
    index = SearchIndex(args.postings, args.store / "search-index")
    if args.baseline_boost < 0:
        raise BadInput("--baseline-boost must be 0 or more")
    decisions = DecisionStore(store.decisions_path).snapshot()
    report = evaluate(lexicon, decisions, index, queries, ExpansionOptions(), ks, args.baseline_boost)
    for path in write_report(report, args.out, lexicon.version):
        print(f"wrote {path}")
    rows = [("metric", "baseline", "expanded")]
    rows += [(m, f"{report['baseline'][m]:.4f}", f"{report['expanded'][m]:.4f}") for m in report["baseline"]]
    print(_table(rows))
    return EXIT_OK


def _decide(args: argparse.Namespace) -> int:
    decisions = DecisionStore(Store(args.store).decisions_path)
    try:
        if args.action == "undo":
            if not args.target.isdigit():
                raise BadInput("undo takes a decision id (see widen decisions)")
            d = decisions.withdraw(int(args.target), args.reviewer, args.note)
            print(f"withdrew decision {d.id}: {d.action} {d.phrase}" + (f" -> {d.neighbour}" if d.neighbour else ""))
            return EXIT_OK
        d = decisions.add(args.target, args.action, args.reviewer, args.neighbour, args.weight, args.note)
    except DecisionError as exc:
        raise BadInput(str(exc)) from exc
    print(f"decision {d.id}: {d.action} {d.phrase}" + (f" -> {d.neighbour}" if d.neighbour else ""))
    return EXIT_OK


def _decisions(args: argparse.Namespace) -> int:
    decisions = DecisionStore(Store(args.store).decisions_path)
    if args.import_file:
        if not args.reviewer:
            raise BadInput("--import needs --reviewer")
        try:
            data = json.loads(args.import_file.read_text(encoding="utf-8"))
            added = decisions.import_(data, args.reviewer)
        except (OSError, json.JSONDecodeError, DecisionError) as exc:
            raise BadInput(f"cannot import {args.import_file}: {exc}") from exc
        print(f"imported {added} decision(s)")
        return EXIT_OK
    if args.export:
        args.export.write_text(json.dumps(decisions.export(), indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
        print(f"wrote {len(decisions.entries())} decision(s) to {args.export}")
        return EXIT_OK
    listed = decisions.entries(include_withdrawn=args.all)
    if args.json:
        print(json.dumps([d.as_dict() for d in listed], indent=2, ensure_ascii=False))
        return EXIT_OK
    if not listed:
        print("no decisions")
        return EXIT_OK
    rows = [("id", "action", "phrase", "neighbour", "weight", "reviewer", "when", "note")]
    for d in listed:
        when = d.created_at + (f" (withdrawn {d.withdrawn_at} by {d.withdrawn_by})" if d.withdrawn_at else "")
        weight = "" if d.weight is None else f"{d.weight:.2f}"
        rows.append((str(d.id), d.action, d.phrase, d.neighbour or "", weight, d.reviewer, when, d.note or ""))
    print(_table(rows))
    return EXIT_OK


def _table(rows: Sequence[Sequence[str]]) -> str:
    widths = [max(len(r[c]) for r in rows) for c in range(len(rows[0]))]
    return "\n".join("  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip() for row in rows)


def render_table(result: ExpansionResult) -> str:
    """The readable form of an expansion: one row a clause, then what was dropped and why."""
    lines = [f"model {result.model.version} ({result.model.created_at})", ""]
    rows: list[tuple[str, ...]] = [("segment", "kind", "phrase", "similarity", "weight", "relation", "source")]
    for seg in result.segments:
        rows.append((seg.text, seg.kind, seg.text, "", "1", "original", ""))
        for e in seg.expansions:
            rows.append(("", "", e.phrase, f"{e.similarity:.3f}", f"{e.weight:.3f}", e.relation, e.source))
    lines.append(_table(rows))
    dropped = [(seg.text, d) for seg in result.segments for d in (seg.dropped or [])]
    if dropped:
        lines += ["", "dropped:"]
        lines.append(
            _table(
                [("segment", "phrase", "similarity", "reason")]
                + [(s, d.phrase, f"{d.similarity:.3f}", d.reason) for s, d in dropped]
            )
        )
    lines += ["", "query text:", result.query_text]
    return "\n".join(lines)


def _train(args: argparse.Namespace) -> int:
    overrides = {"gate.pairs": str(args.pairs.resolve())} if args.pairs else None
    config = load_config(args.config, overrides)
    if args.print_config:
        sys.stdout.write(config.to_toml())
        return EXIT_OK
    if args.corpus is None or args.store is None:
        raise BadInput("train needs --corpus and --store (or --print-config)")
    outcome = train(args.corpus, args.store, config, force=args.force)
    print(summary(outcome))
    if not outcome.promoted:
        print(f"\nthe gate refused {outcome.version}; it is kept as rejected and the serving bundle is unchanged.")
        print(f"to serve it anyway: widen promote {outcome.version} --store {args.store} --force")
    return outcome.exit_code


def _bundles(args: argparse.Namespace) -> int:
    infos = Store(args.store).listing()
    if args.json:
        print(json.dumps([i.as_dict() for i in infos], indent=2))
        return EXIT_OK
    if not infos:
        print(f"no bundles in {args.store}")
        return EXIT_OK
    header = ("version", "status", "created_at", "gate", "forced")
    rows = [
        (
            i.version,
            i.status,
            i.created_at,
            "n/a" if i.gate_score is None else f"{i.gate_score:.3f}",
            "yes" if i.forced else "",
        )
        for i in infos
    ]
    print(_table([header, *rows]))
    return EXIT_OK


def _promote_version(store: Store, version: str, force: bool, by: str) -> int:
    problems = store.verify(version)
    if problems:
        raise BundleError("; ".join(problems))
    gate = store.manifest(version).get("gate") or {}
    if not gate.get("passed") and not force:
        raise BadInput(f"{version} was refused by the gate ({'; '.join(gate.get('reasons', []))}); add --force")
    with store.locked():
        store.set_current(version, by=by, forced=not gate.get("passed"))
    print(f"now serving {version}")
    return EXIT_OK


def _promote(args: argparse.Namespace) -> int:
    return _promote_version(Store(args.store), args.version, args.force, by="promote")


def _rollback(args: argparse.Namespace) -> int:
    store = Store(args.store)
    target = store.rollback_target()
    if target is None:
        raise BadInput(f"no earlier bundle to roll back to in {args.store}")
    return _promote_version(store, target, force=True, by="rollback")


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING, format="%(levelname)s %(name)s: %(message)s"
    )
    if not args.verbose:
        logging.getLogger("gensim").setLevel(logging.WARNING)
    try:
        return int(args.handler(args))
    except (BadInput, ConfigError) as exc:
        print(f"widen: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (BundleError, StoreBusy) as exc:
        print(f"widen: {exc}", file=sys.stderr)
        return EXIT_FAILURE
    except KeyboardInterrupt:
        print("widen: interrupted; the serving bundle is unchanged", file=sys.stderr)
        return EXIT_FAILURE


if __name__ == "__main__":
    sys.exit(main())
