"""/v1/heads: cylinder-head plug ports (list, get, create, replace, delete)."""
from __future__ import annotations

from flask.views import MethodView

from schemas.answers import HeadSchema
from schemas.history import ChangeSchema, HistoryQuerySchema
from schemas.inventory import HeadFilterSchema, HeadReplacementSchema, NewHeadSchema
from service.store import db, repository
from service.web import examples, history_pages, records
from service.web.smorest import Blueprint

blp = Blueprint("heads", __name__, url_prefix="/v1/heads",
                description="Cylinder-head plug ports, under the shop's own head_id.")

HEAD_ID_PARAMETER = {"in": "path", "name": "head_id", "description": "The shop's identifier: 1-64 letters, "
                     "digits, '-', '_' or '.', starting with a letter or digit; case-sensitive."}


@blp.route("")
class Heads(MethodView):
    @blp.doc(operationId="list_heads")
    @blp.arguments(HeadFilterSchema, location="query")
    @blp.response(200, HeadSchema(many=True), example=[examples.HEAD_ANSWER])
    @blp.paginate()
    def get(self, filters, pagination_parameters):
        """List heads, filtered by text in the description (q), thread and seat

        Ordered by head_id; paginated with `page` and `page_size` (X-Pagination header).
        """
        query = repository.head_query(text=filters.get("q"), thread=filters.get("thread"), seat=filters.get("seat"))
        repo = repository.heads(db.session())
        rows, total = repo.page(query, pagination_parameters.first_item, pagination_parameters.page_size)
        pagination_parameters.item_count = total
        return [repo.mapping.document_of(row) for row in rows]

    @blp.doc(operationId="create_head")
    @blp.record_etag
    @blp.arguments(NewHeadSchema, example=examples.HEAD)
    @blp.response(201, HeadSchema, example=examples.HEAD_ANSWER,
                  headers={"Location": {"description": "URL of the new head", "schema": {"type": "string"}}})
    @blp.alt_response(409, response="CONFLICT")
    def post(self, document):
        """Create a head

        The client chooses the head_id; one that exists is a 409. Needs an API key.
        """
        session = db.session()
        return records.create(repository.heads(session), document, "heads.HeadItem", session)


@blp.route("/<string:head_id>", parameters=[HEAD_ID_PARAMETER])
class HeadItem(MethodView):
    @blp.doc(operationId="get_head")
    @blp.record_etag
    @blp.response(200, HeadSchema, example=examples.HEAD_ANSWER)
    @blp.alt_response(404, response="NOT_FOUND")
    def get(self, head_id):
        """Get one head

        The body can be sent back unchanged with PUT; the ETag guards it (If-Match).
        """
        return records.get(repository.heads(db.session()), head_id, "head")

    @blp.doc(operationId="replace_head")
    @blp.record_etag
    @blp.arguments(HeadReplacementSchema, example=examples.HEAD)
    @blp.response(200, HeadSchema, example=examples.HEAD_ANSWER)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.alt_response(409, response="CONFLICT")
    def put(self, document, head_id):
        """Replace a head

        A full replacement: fields left out are cleared. Needs an API key; send If-Match
        with the ETag of a GET to refuse the change (412) if someone changed it since.
        """
        session = db.session()
        return records.replace(repository.heads(session), head_id, document, "head", session)

    @blp.doc(operationId="delete_head")
    @blp.record_etag
    @blp.response(204)
    @blp.alt_response(404, response="NOT_FOUND")
    def delete(self, head_id):
        """Delete a head

        Needs an API key; If-Match is honoured when sent.
        """
        session = db.session()
        records.delete(repository.heads(session), head_id, "head", session)


@blp.route("/<string:head_id>/history", parameters=[HEAD_ID_PARAMETER])
class HeadHistory(MethodView):
    @blp.doc(operationId="list_head_history")
    @blp.arguments(HistoryQuerySchema, location="query")
    @blp.response(200, ChangeSchema(many=True), example=history_pages.HEAD_EXAMPLE)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.paginate()
    def get(self, query, head_id, pagination_parameters):
        """Change history of a head

        Every create, replace and delete of the head, by the API or an import, with who
        made it (the API key's name), when, and the head before and after as GET showed
        it. Newest first unless `order=oldest_first`; paginated with `page` and
        `page_size` (X-Pagination header). A deleted head's history is still served; 404
        when the head_id has neither a head nor any history.
        """
        return history_pages.history_page("head", head_id, query, pagination_parameters)
