"""plugfit: does this spark plug fit this cylinder-head port, and if not, by how much?

The package is layered; each layer imports only the ones below it (checked by
import-linter, see pyproject.toml):

- `service.web`, `service.cli`: the two entry points (the Flask app, the `plugfit` command)
- `service.usecases`: one module per thing a user asks for (a fit check, a build list, ...)
- `service.store` (the database) and `service.formats` (text in and out, no database)
- `schemas` (beside this package): the marshmallow schemas, single source of validation
- `service.units`, `service.config`, `service.catalog_loader`: the boundary helpers
- `service.fitment`: the pure fit engine, standard library only

Importing this package runs nothing: `import service.fitment` must not pay for Flask.
"""
