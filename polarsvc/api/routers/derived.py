"""Stored derived tables by hash: the table, its lineage, and verification."""

from __future__ import annotations

from typing import Literal

from fastapi import APIRouter, Request
from fastapi.responses import PlainTextResponse

from polarsvc import lineage, pipeline
from polarsvc.api import visibility
from polarsvc.api.deps import Reader, ReadSession
from polarsvc.api.responses import choose_format, json_response
from polarsvc.api.routers.polars import FormatQuery
from polarsvc.api.schemas import ERROR_RESPONSES, TABLE_RESPONSES, HashKey, RotorPartQuery
from polarsvc.api.served import served_response

router = APIRouter(tags=["derived tables and lineage"], responses=ERROR_RESPONSES)


@router.get(
    "/derived/{key}", responses=TABLE_RESPONSES,
    summary="A cached derived table by content or recipe hash")
def get_derived(key: HashKey, request: Request, _: Reader, format: FormatQuery = None,
                part: RotorPartQuery = None):
    fmt = choose_format(request, format)
    served = pipeline.stored_table(request.app.state.session_factory, key)
    return served_response(request, served, fmt, part)


@router.get(
    "/derived/{key}/lineage",
    responses={200: {"description": "the lineage tree (JSON) or its text form",
                     "content": {"application/json": {},
                                 "text/plain": {"schema": {"type": "string"}}}}},
    summary="The tree of inputs of a derived table, down to stored revisions",
    description=(
        "By recipe hash: that table's tree. By content hash: the tree, or, when several "
        "recipes gave the same numbers, a node `content` whose `recipes` lists each tree."
    ),
)
def get_lineage(
    key: HashKey,
    session: ReadSession,
    principal: Reader,
    format: Literal["json", "text"] = "json",
):
    """Uploaders and reviewers are named to admins only (others see the reviewer's role)."""
    tree = visibility.lineage_for(
        principal, lineage.lineage_of(session, pipeline.find_derived_all(session, key))
    )
    if format == "text":
        return PlainTextResponse(lineage.lineage_text(tree))
    return json_response(tree)


@router.post(
    "/derived/{key}/verify",
    summary="Recompute a derived table from its recorded recipe and compare hashes",
    description=(
        "A content hash shared by several recipes checks each: `matches` is true when all "
        "match, `recipes` holds one report per recipe."
    ),
)
def verify(key: HashKey, request: Request, _: Reader):
    return json_response(pipeline.verify_derived(request.app.state.session_factory, key))
