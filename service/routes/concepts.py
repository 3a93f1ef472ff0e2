"""`/v1/concept-tokens`: the concept tokens of postings, as the board's indexing pipeline receives them.

The same tokens `widen tag` writes for a whole dump, from the serving bundle; the response names the
bundle and its concept lineage, so the pipeline can tell when the index must be tagged again.
"""

from __future__ import annotations

from fastapi import APIRouter
from fastapi.responses import Response
from pydantic import BaseModel, ConfigDict, Field

from service.errors import ERRORS, ApiError
from service.routes import State
from service.routes.expansion import JsonBody
from widen.expansion.result import ModelInfo

__all__ = ["router", "TagRequest", "TagResponse", "MAX_POSTINGS"]

router = APIRouter(tags=["concepts"])

#: Postings one request may carry.
MAX_POSTINGS = 1000


class PostingText(BaseModel):
    model_config = ConfigDict(extra="ignore")  # a posting's other fields are the pipeline's own

    id: str = Field(min_length=1, max_length=256)
    title: str = Field(default="", max_length=2_000)
    description: str = Field(default="", max_length=200_000)


class TagRequest(BaseModel):
    postings: list[PostingText] = Field(min_length=1, max_length=MAX_POSTINGS)


class TaggedPosting(BaseModel):
    id: str
    tokens: list[str] = Field(description="one concept token a size, coarse to fine; empty: no word the bundle knows")


class TagResponse(BaseModel):
    model: ModelInfo
    lineage: str = Field(description="the concept set; a new lineage means the index must be tagged again")
    field: str = Field(description="the index field the tokens belong in (the concept_field option)")
    sizes: list[int]
    postings: list[TaggedPosting]


@router.post("/v1/concept-tokens", response_model=TagResponse, responses=ERRORS)
async def concept_tokens(body: TagRequest, state: State) -> Response:
    """Each posting's concept tokens from the serving bundle."""
    serving = state.serving
    if serving is None:
        raise ApiError(503, "not_ready", state.not_ready_reason)
    lexicon = serving.lexicon
    concepts = lexicon.concepts
    if concepts is None:
        raise ApiError(409, "no_concepts", f"bundle {lexicon.version} has no concepts (trained without them)")
    tokens = lexicon.tag([(p.title, p.description) for p in body.postings])
    response = TagResponse(
        model=ModelInfo(version=lexicon.version, created_at=lexicon.created_at),
        lineage=concepts.lineage,
        field=serving.options.concept_field,
        sizes=list(concepts.sizes),
        postings=[TaggedPosting(id=p.id, tokens=t) for p, t in zip(body.postings, tokens, strict=True)],
    )
    return JsonBody(response.model_dump_json().encode())
