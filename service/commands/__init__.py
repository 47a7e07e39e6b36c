"""One module per `plugfit` sub-command; listed in `service.cli._COMMAND_NAMES`."""
