"""One module per use case: a fit check, a build list, the parts search, stock files, seeding."""
