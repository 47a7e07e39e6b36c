"""/v1/plugs: the shop's plug inventory (list, get, create, replace, delete)."""
from __future__ import annotations

from flask.views import MethodView

from schemas.answers import PlugSchema
from schemas.history import ChangeSchema, HistoryQuerySchema
from schemas.inventory import NewPlugSchema, PlugFilterSchema, PlugReplacementSchema
from service.store import db, repository
from service.web import examples, history_pages, records
from service.web.smorest import Blueprint

blp = Blueprint("plugs", __name__, url_prefix="/v1/plugs",
                description="Plug inventory: one record per shop line, under the shop's own sku.")

SKU_PARAMETER = {"in": "path", "name": "sku", "description": "The shop's identifier: 1-64 letters, digits, "
                 "'-', '_' or '.', starting with a letter or digit; case-sensitive."}


@blp.route("")
class Plugs(MethodView):
    @blp.doc(operationId="list_plugs")
    @blp.arguments(PlugFilterSchema, location="query")
    @blp.response(200, PlugSchema(many=True), example=[examples.PLUG_ANSWER])
    @blp.paginate()
    def get(self, filters, pagination_parameters):
        """List plugs, filtered by thread, seat, reach, hex and resistor

        Ordered by sku; paginated with `page` and `page_size` (X-Pagination header).
        """
        query = repository.plug_query(thread=filters.get("thread"), seat=filters.get("seat"),
                                      reach_mm=filters["reach"].nominal if "reach" in filters else None,
                                      hex_mm=filters.get("hex"), resistor=filters.get("resistor"))
        repo = repository.plugs(db.session())
        rows, total = repo.page(query, pagination_parameters.first_item, pagination_parameters.page_size)
        pagination_parameters.item_count = total
        return [repo.mapping.document_of(row) for row in rows]

    @blp.doc(operationId="create_plug")
    @blp.record_etag
    @blp.arguments(NewPlugSchema, example=examples.PLUG)
    @blp.response(201, PlugSchema, example=examples.PLUG_ANSWER,
                  headers={"Location": {"description": "URL of the new plug", "schema": {"type": "string"}}})
    @blp.alt_response(409, response="CONFLICT")
    def post(self, document):
        """Create a plug

        The client chooses the sku; one that exists is a 409. Needs an API key.
        """
        session = db.session()
        return records.create(repository.plugs(session), document, "plugs.PlugItem", session)


@blp.route("/<string:sku>", parameters=[SKU_PARAMETER])
class PlugItem(MethodView):
    @blp.doc(operationId="get_plug")
    @blp.record_etag
    @blp.response(200, PlugSchema, example=examples.PLUG_ANSWER)
    @blp.alt_response(404, response="NOT_FOUND")
    def get(self, sku):
        """Get one plug

        The body can be sent back unchanged with PUT; the ETag guards it (If-Match).
        """
        return records.get(repository.plugs(db.session()), sku, "plug")

    @blp.doc(operationId="replace_plug")
    @blp.record_etag
    @blp.arguments(PlugReplacementSchema, example=examples.PLUG)
    @blp.response(200, PlugSchema, example=examples.PLUG_ANSWER)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.alt_response(409, response="CONFLICT")
    def put(self, document, sku):
        """Replace a plug

        A full replacement: fields left out are cleared. Needs an API key; send If-Match
        with the ETag of a GET to refuse the change (412) if someone changed it since.
        """
        session = db.session()
        return records.replace(repository.plugs(session), sku, document, "plug", session)

    @blp.doc(operationId="delete_plug")
    @blp.record_etag
    @blp.response(204)
    @blp.alt_response(404, response="NOT_FOUND")
    def delete(self, sku):
        """Delete a plug

        Needs an API key; If-Match is honoured when sent.
        """
        session = db.session()
        records.delete(repository.plugs(session), sku, "plug", session)


@blp.route("/<string:sku>/history", parameters=[SKU_PARAMETER])
class PlugHistory(MethodView):
    @blp.doc(operationId="list_plug_history")
    @blp.arguments(HistoryQuerySchema, location="query")
    @blp.response(200, ChangeSchema(many=True), example=history_pages.PLUG_EXAMPLE)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.paginate()
    def get(self, query, sku, pagination_parameters):
        """Change history of a plug

        Every create, replace and delete of the plug, by the API or an import, with who
        made it (the API key's name), when, and the plug before and after as GET showed
        it. Newest first unless `order=oldest_first`; paginated with `page` and
        `page_size` (X-Pagination header). A deleted plug's history is still served; 404
        when the sku has neither a plug nor any history.
        """
        return history_pages.history_page("plug", sku, query, pagination_parameters)
