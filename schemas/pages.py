"""Pagination of lists: the `page` and `page_size` query parameters and the
`X-Pagination` header's document (`service.web.smorest.Blueprint.paginate`)."""
from __future__ import annotations

from marshmallow import Schema, fields, validate

# The contract caps page_size at 1,000; PLUGFIT_MAX_PAGE_SIZE may lower it at run time.
CONTRACT_MAX_PAGE_SIZE = 1000
DEFAULT_PAGE_SIZE = 50
# Far past any list, and past what a database OFFSET can hold.
MAX_PAGE = 1_000_000_000


class PageQuerySchema(Schema):
    page = fields.Integer(load_default=1, validate=validate.Range(1, MAX_PAGE), metadata={
        "description": "page number, from 1; a page past the end is empty (X-Pagination still says "
                       "where the list ends)"})
    # The upper limit is checked by the paginator, which knows the configured one and names
    # it in the problem's `limit`; the document states the contract's.
    page_size = fields.Integer(load_default=DEFAULT_PAGE_SIZE, validate=validate.Range(min=1),
                               metadata={"maximum": CONTRACT_MAX_PAGE_SIZE, "description": f"records per page, default {DEFAULT_PAGE_SIZE}, at most "
                                                        f"{CONTRACT_MAX_PAGE_SIZE} (the operator may set a lower "
                                                        "limit: PLUGFIT_MAX_PAGE_SIZE)"})


class PageMetadataSchema(Schema):
    """The X-Pagination header's JSON document."""

    total = fields.Integer(required=True, metadata={"description": "records in the whole list"})
    total_pages = fields.Integer(required=True)
    first_page = fields.Integer(metadata={"description": "1; absent when the list is empty"})
    last_page = fields.Integer(metadata={"description": "absent when the list is empty"})
    page = fields.Integer(required=True, metadata={"description": "the page asked for, even past the end"})
    previous_page = fields.Integer(metadata={
        "description": "the page before this one, or the last page when this one lies past the end"})
    next_page = fields.Integer(metadata={"description": "absent on the last page and past it"})
