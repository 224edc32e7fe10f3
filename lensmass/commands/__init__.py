"""One module per ``lensmass`` subcommand: ``add_arguments(parser)`` and ``run(args)``."""
