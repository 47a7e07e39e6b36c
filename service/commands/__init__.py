"""One module per `plugfit` sub-command; listed in `service.cli.COMMAND_MODULES`."""
