"""The review page at /debug: what widen does with a phrase and why, and the reviewers' decisions.

Server-rendered with Jinja2 (autoescaping on), no script at all: every control is a plain
form, and the Content-Security-Policy of these pages forbids scripts outright, so a hostile
phrase from a seeker or the corpus is shown as text and cannot run.

Writes need the review token (`WIDEN_REVIEW_TOKEN`). The page asks for it once and keeps,
in an HttpOnly, SameSite=Strict cookie, a key derived from it (an HMAC, not the token);
every form carries a CSRF token derived from that key. Both are derived, not stored, so any
worker checks them without shared state. With no review token configured the page is
read-only and says so.
"""

from __future__ import annotations

import hashlib
import hmac
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, quote, unquote, urlencode

import numpy as np
from fastapi import FastAPI, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from jinja2 import Environment, FileSystemLoader, select_autoescape
from starlette.concurrency import run_in_threadpool

from service.decisions import Decision, DecisionError, DecisionSet, DecisionStore
from service.evaluation import BASELINE_BOOST, baseline_text, merged_text
from service.expansion import ExpansionOptions, Lexicon, expand
from service.lifecycle import ModelHolder
from service.result import ExpansionResult
from service.search_index import SearchIndex
from service.settings import Settings
from training.bundle import BundleError, Store, open_bundle
from training.tokenize import PHRASE_JOINER

__all__ = ["add_review_routes", "ReviewAccess", "phrase_view", "compare_view", "neighbour_map", "REASONS"]

TEMPLATES = Path(__file__).with_name("templates")
SESSION_COOKIE = "widen_review_key"
REVIEWER_COOKIE = "widen_reviewer"
MAX_FORM_FIELD = 2000
MAP_POINTS = 15  # the closest candidates drawn on the map; more and the labels cover each other

#: What each drop reason means, in the words the page shows.
REASONS = {
    "protected": "a place or employer name of the dump; never offered",
    "number_or_stop_word": "only numbers or stop words",
    "below_min_similarity": "similarity under the floor",
    "blocked": "blocked by a reviewer",
    "pinned": "already pinned by a reviewer",
    "same_as_original": "the same words in another spelling",
    "broader_than_original": "broader than what was asked (fewer of its words)",
    "modifier_only": "differs only by a modifier (senior, nights...)",
    "kind_mismatch": "rarely a job title, while the phrase is one",
    "used_alongside": "used beside the phrase (its context), not instead of it",
    "near_duplicate": "a spelling of a neighbour already kept",
    "related_in_strict_mode": "related, and strict mode keeps only equivalents",
    "max_per_segment": "over the limit of expansions for one segment",
    "max_clauses": "over the limit of clauses for the query",
    "duplicate_clause": "already a clause of this query",
    "never_expand": "a reviewer marked the phrase never-expand",
}

CSP = (
    "default-src 'none'; style-src 'self'; img-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'"
)


# -- what the page shows -------------------------------------------------------------------


@dataclass(frozen=True)
class Candidate:
    phrase: str
    similarity: float
    kept: bool
    weight: float | None
    relation: str | None
    source: str
    reason: str | None

    @property
    def bar(self) -> float:
        """Bar length in 0..1 for a similarity in -1..1 (common practice, no source: clamp negatives)."""
        return max(0.0, min(1.0, self.similarity))

    @property
    def reason_text(self) -> str:
        return REASONS.get(self.reason or "", self.reason or "")


@dataclass(frozen=True)
class MapPoint:
    phrase: str
    x: float
    y: float
    role: str  # phrase, kept, dropped


@dataclass(frozen=True)
class SegmentView:
    index: int
    text: str
    kind: str
    candidates: list[Candidate]
    map: list[MapPoint] = field(default_factory=list)
    decisions: list[Decision] = field(default_factory=list)


def _key(phrase: str) -> str:
    return PHRASE_JOINER.join(phrase.split(" "))


def _vector(lex: Lexicon, phrase: str) -> np.ndarray[Any, Any] | None:
    """The unit input vector of a phrase: its own entry, or the mean of its known words."""
    j = lex.index.get(_key(phrase))
    if j is not None:
        return np.asarray(lex.normed[j], dtype=np.float64)
    rows = [lex.index[w] for w in phrase.split(" ") if w in lex.index]
    if not rows:
        return None
    mean = np.asarray(lex.normed[rows], dtype=np.float64).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    return mean / norm if norm else None


def neighbour_map(
    lex: Lexicon, phrase: str, candidates: list[Candidate], width: float = 480, height: float = 300
) -> list[MapPoint]:
    """The phrase and its candidates projected on their first two principal components (PCA
    by singular value decomposition of the centred vectors), scaled into a width x height box."""
    names, roles, vectors = [], [], []
    own = _vector(lex, phrase)
    if own is None:
        return []
    names.append(phrase)
    roles.append("phrase")
    vectors.append(own)
    for c in candidates:
        v = _vector(lex, c.phrase)
        if v is not None and c.phrase != phrase:
            names.append(c.phrase)
            roles.append("kept" if c.kept else "dropped")
            vectors.append(v)
    if len(vectors) < 3:
        return []
    matrix = np.vstack(vectors)
    centred = matrix - matrix.mean(axis=0)
    _, _, vt = np.linalg.svd(centred, full_matrices=False)
    xy = centred @ vt[:2].T
    # One scale for both axes, so that distance on the map keeps its meaning; room for labels.
    left, top, room_x, room_y = 20.0, 20.0, width - 140.0, height - 40.0
    lo = xy.min(axis=0)
    span = xy.max(axis=0) - lo
    scale = min(room_x / span[0] if span[0] > 1e-12 else np.inf, room_y / span[1] if span[1] > 1e-12 else np.inf)
    scale = float(scale) if np.isfinite(scale) else 1.0
    placed = (xy - lo) * scale
    return [
        MapPoint(n, round(left + float(px), 1), round(top + float(py), 1), r)
        for n, r, (px, py) in zip(names, roles, placed, strict=True)
    ]


def phrase_view(
    lex: Lexicon, decisions: DecisionSet, query: str, options: ExpansionOptions
) -> tuple[ExpansionResult, list[SegmentView]]:
    """Expand with every drop explained; one view per segment, kept and dropped by similarity."""
    result = expand(lex, decisions, query, options.model_copy(update={"explain": True}))
    views = []
    for s, segment in enumerate(result.segments):
        rows = [
            Candidate(e.phrase, e.similarity, True, e.weight, e.relation, e.source, None) for e in segment.expansions
        ]
        rows += [
            Candidate(d.phrase, d.similarity, False, None, d.relation, "model", d.reason) for d in segment.dropped or []
        ]
        rows.sort(key=lambda c: (-c.similarity, c.phrase))
        points = neighbour_map(lex, segment.text, rows[:MAP_POINTS]) if rows else []
        views.append(SegmentView(s, segment.text, segment.kind, rows, points))
    return result, views


@dataclass(frozen=True)
class Change:
    phrase: str
    left_rank: int | None
    right_rank: int | None
    left_weight: float | None
    right_weight: float | None

    @property
    def mark(self) -> str:
        """What the right-hand bundle does differently: added, removed, up, down or same."""
        if self.left_rank is None:
            return "added"
        if self.right_rank is None:
            return "removed"
        if self.right_rank < self.left_rank:
            return "up"
        if self.right_rank > self.left_rank:
            return "down"
        return "same"


def _ranked(result: ExpansionResult) -> dict[str, tuple[int, float]]:
    expansions = sorted((c for c in result.clauses if not c.original), key=lambda c: (-c.weight, c.phrase))
    return {c.phrase: (n + 1, c.weight) for n, c in enumerate(expansions)}


def compare_view(left: ExpansionResult, right: ExpansionResult) -> list[Change]:
    """Every expansion of either result, ranked by weight, with its place on each side."""
    a, b = _ranked(left), _ranked(right)
    rows = [
        Change(
            p, a[p][0] if p in a else None, b[p][0] if p in b else None, a.get(p, (0, None))[1], b.get(p, (0, None))[1]
        )
        for p in set(a) | set(b)
    ]
    rows.sort(key=lambda c: (min(r for r in (c.left_rank, c.right_rank) if r is not None), c.phrase))
    return rows


# -- access --------------------------------------------------------------------------------


class ReviewAccess:
    """The review token, and the cookie key and CSRF tokens derived from it."""

    def __init__(self, token: str) -> None:
        self._token = token.encode()

    @property
    def enabled(self) -> bool:
        return bool(self._token)

    def token_matches(self, candidate: str) -> bool:
        return self.enabled and hmac.compare_digest(candidate.encode(), self._token)

    def session_key(self) -> str:
        return hmac.new(self._token, b"widen review session 1", hashlib.sha256).hexdigest()

    def signed_in(self, cookie: str | None) -> bool:
        return (
            self.enabled and bool(cookie) and hmac.compare_digest((cookie or "").encode(), self.session_key().encode())
        )

    def csrf(self) -> str:
        return hmac.new(self._token, b"widen review form 1|" + self.session_key().encode(), hashlib.sha256).hexdigest()

    def csrf_matches(self, value: str) -> bool:
        return self.enabled and hmac.compare_digest(value.encode(), self.csrf().encode())


# -- the routes ----------------------------------------------------------------------------


def _environment() -> Environment:
    env = Environment(
        loader=FileSystemLoader(str(TEMPLATES)),
        autoescape=select_autoescape(enabled_extensions=("html",), default_for_string=True),
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["debug_link"] = lambda params: "/debug?" + urlencode({k: v for k, v in params.items() if v})
    env.filters["num"] = lambda v, places=3: "" if v is None else f"{v:.{places}f}"
    return env


async def _form(request: Request) -> dict[str, str]:
    raw = (await request.body()).decode("utf-8", errors="replace")
    parsed = parse_qs(raw, keep_blank_values=True, max_num_fields=50)
    return {k: v[0][:MAX_FORM_FIELD] for k, v in parsed.items() if v}


def add_review_routes(
    app: FastAPI,
    settings: Settings,
    holder: ModelHolder,
    options: ExpansionOptions,
    preview: Callable[[], SearchIndex | None],
) -> None:
    """Mount /debug and its forms on the service app."""
    env = _environment()
    access = ReviewAccess(settings.review_token.get_secret_value() if settings.review_token else "")
    store = Store(settings.store)
    decision_store = DecisionStore(store.decisions_path)
    others: dict[str, Lexicon] = {}

    def other_lexicon(version: str) -> Lexicon:
        serving = holder.serving
        if serving is not None and serving.version == version:
            return serving.lexicon
        if version not in others:
            if len(others) >= 3:
                others.pop(next(iter(others)))
            others[version] = Lexicon(open_bundle(store, version, verify=True))
        return others[version]

    def page(request: Request, template: str, status: int = 200, **values: Any) -> HTMLResponse:
        signed_in = access.signed_in(request.cookies.get(SESSION_COOKIE))
        serving = holder.serving
        html = env.get_template(template).render(
            writable=access.enabled,
            signed_in=signed_in,
            csrf=access.csrf() if signed_in else "",
            reviewer=unquote(request.cookies.get(REVIEWER_COOKIE, ""))[:100],
            model=serving.lexicon if serving else None,
            not_ready=holder.not_ready_reason,
            **values,
        )
        response = HTMLResponse(html, status_code=status)
        response.headers["Content-Security-Policy"] = CSP
        response.headers["X-Content-Type-Options"] = "nosniff"
        response.headers["Referrer-Policy"] = "same-origin"
        response.headers["Cache-Control"] = "no-store"
        return response

    def phrase_page(
        request: Request, q: str, compare: str, status: int = 200, error: str = "", done: str = ""
    ) -> HTMLResponse:
        serving = holder.serving
        values: dict[str, Any] = {"q": q, "compare": compare, "error": error, "bundles": store.listing()}
        if done:
            values["done_decision"] = next(
                (d for d in decision_store.entries(include_withdrawn=True) if str(d.id) == done), None
            )
        if serving is None or not q.strip():
            return page(request, "review_phrase.html", status, result=None, views=[], **values)
        q = q[: settings.max_query_chars]
        result, views = phrase_view(serving.lexicon, holder.decisions, q, options)
        active = decision_store.entries()
        views = [
            SegmentView(v.index, v.text, v.kind, v.candidates, v.map, [d for d in active if d.phrase == v.text])
            for v in views
        ]
        values.update(result=result, views=views)
        if compare and compare != serving.version:
            try:
                other = other_lexicon(compare)
                right = expand(other, holder.decisions, q, options)
                values.update(compared=right, changes=compare_view(result, right))
            except (BundleError, OSError, ValueError) as exc:
                values["compare_error"] = f"bundle {compare} cannot be opened: {exc}"
        index = preview()
        if index is not None:
            plain = baseline_text(result, options)
            try:
                plain_hits = index.search(plain, 10)
                expanded_hits = index.search(merged_text(plain, result.query_text, BASELINE_BOOST), 10)
                matched = index.matching(plain)
                values["preview"] = {
                    "plain": plain_hits,
                    "expanded": [(h, h.id not in matched) for h in expanded_hits],
                    "total_plain": len(matched),
                }
            except ValueError as exc:
                values["preview_error"] = str(exc)
        return page(request, "review_phrase.html", status, **values)

    # The page routes are plain functions: FastAPI runs them in its thread pool, so expanding,
    # opening a bundle to compare or searching the preview index never holds up /v1/expand.
    @app.get("/debug", response_class=HTMLResponse, include_in_schema=False)
    def debug(request: Request, q: str = "", compare: str = "", done: str = "") -> HTMLResponse:
        return phrase_page(request, q, compare, done=done if done.isdigit() else "")

    css = (TEMPLATES / "review.css").read_bytes()

    @app.get("/debug/review.css", include_in_schema=False)
    async def stylesheet() -> Response:
        return Response(css, media_type="text/css", headers={"Cache-Control": "max-age=300"})

    @app.get("/debug/decisions", response_class=HTMLResponse, include_in_schema=False)
    def decisions_page(
        request: Request, phrase: str = "", action: str = "", reviewer: str = "", state: str = "active"
    ) -> HTMLResponse:
        rows = decision_store.entries(include_withdrawn=True)
        if phrase:
            rows = [d for d in rows if phrase.lower() in d.phrase or (d.neighbour and phrase.lower() in d.neighbour)]
        if action in ("block", "pin", "never"):
            rows = [d for d in rows if d.action == action]
        if reviewer:
            rows = [d for d in rows if reviewer.lower() in d.reviewer.lower()]
        if state == "active":
            rows = [d for d in rows if d.withdrawn_at is None]
        elif state == "withdrawn":
            rows = [d for d in rows if d.withdrawn_at is not None]
        shown = {d.id for d in rows}
        trail = [a for a in decision_store.audit() if a["decision_id"] in shown]
        filters = {"phrase": phrase, "action": action, "reviewer": reviewer, "state": state}
        return page(request, "review_decisions.html", decisions=rows, trail=trail, filters=filters)

    @app.get("/debug/access", response_class=HTMLResponse, include_in_schema=False)
    async def access_page(request: Request) -> HTMLResponse:
        return page(request, "review_access.html")

    @app.post("/debug/access", include_in_schema=False)
    async def sign_in(request: Request) -> Response:
        form = await _form(request)
        if not access.enabled:
            return page(request, "review_access.html", 403, error="This service has no review token; it is read-only.")
        if not access.token_matches(form.get("token", "")):
            return page(request, "review_access.html", 403, error="That is not the review token.")
        response = RedirectResponse("/debug", status_code=303)
        secure = request.url.scheme == "https"
        response.set_cookie(
            SESSION_COOKIE, access.session_key(), httponly=True, samesite="strict", secure=secure, path="/"
        )
        return response

    @app.post("/debug/leave", include_in_schema=False)
    async def sign_out(request: Request) -> Response:
        form = await _form(request)
        if not access.csrf_matches(form.get("csrf", "")):
            return page(request, "review_access.html", 403, error="The form is stale; sign in again.")
        response = RedirectResponse("/debug", status_code=303)
        response.delete_cookie(SESSION_COOKIE, path="/", httponly=True, samesite="strict")
        return response

    def refused(request: Request, form: dict[str, str]) -> HTMLResponse | None:
        if not access.enabled:
            return page(request, "review_access.html", 403, error="This service has no review token; it is read-only.")
        if not access.signed_in(request.cookies.get(SESSION_COOKIE)):
            return page(request, "review_access.html", 401, error="Give the review token before changing decisions.")
        if not access.csrf_matches(form.get("csrf", "")):
            return page(
                request, "review_access.html", 403, error="The form is stale or came from elsewhere; try again."
            )
        return None

    def after_write(request: Request, form: dict[str, str], decision: Decision) -> Response:
        holder.check_decisions()  # this worker at once; the others within their decisions poll
        target = "/debug?" + urlencode({"q": form.get("q", "") or decision.phrase, "done": str(decision.id)})
        if form.get("compare"):
            target += "&" + urlencode({"compare": form["compare"]})
        response = RedirectResponse(target, status_code=303)
        # Remembered to prefill the next form; quoted, since a cookie carries only ASCII.
        remembered = quote(decision.reviewer[:100], safe="")
        response.set_cookie(REVIEWER_COOKIE, remembered, httponly=True, samesite="strict", path="/")
        return response

    async def checked_form(request: Request) -> tuple[dict[str, str], HTMLResponse | None]:
        """The posted form, and the refusal page when the poster may not write."""
        form = await _form(request)
        return form, refused(request, form)

    async def again(request: Request, form: dict[str, str], problem: str) -> HTMLResponse:
        """The phrase page the form came from, with what was wrong (400), rendered off the event loop."""
        return await run_in_threadpool(phrase_page, request, form.get("q", ""), form.get("compare", ""), 400, problem)

    @app.post("/debug/decide", include_in_schema=False)
    async def decide(request: Request) -> Response:
        form, denied = await checked_form(request)
        if denied is not None:
            return denied
        action = form.get("action", "")
        neighbour = form.get("other", "").strip() or form.get("neighbour", "").strip() or None
        weight: float | None = None
        if action == "pin":
            try:
                weight = float(form.get("weight", ""))
            except ValueError:
                weight = math.nan
            if not math.isfinite(weight):
                return await again(request, form, "Pin needs a weight, a number between 0 and 1.")
        if action == "never":
            neighbour = None
        try:
            # SQLite may wait for another writer's lock: off the event loop, like the API's writes.
            decision = await run_in_threadpool(
                decision_store.add,
                form.get("phrase", ""),
                action,
                form.get("reviewer", "")[:100],
                neighbour,
                weight,
                form.get("note", "").strip() or None,
            )
        except DecisionError as exc:
            return await again(request, form, f"Not recorded: {exc}.")
        return await run_in_threadpool(after_write, request, form, decision)

    @app.post("/debug/undo", include_in_schema=False)
    async def undo(request: Request) -> Response:
        form, denied = await checked_form(request)
        if denied is not None:
            return denied
        try:
            decision = await run_in_threadpool(
                decision_store.withdraw,
                int(form.get("id", "0") or 0),
                form.get("reviewer", "")[:100],
                form.get("note", "").strip() or None,
            )
        except (DecisionError, ValueError) as exc:
            return await again(request, form, f"Not undone: {exc}.")
        return await run_in_threadpool(after_write, request, form, decision)
