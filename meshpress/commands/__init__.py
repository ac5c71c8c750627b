"""One module per CLI command: ``add_parser(subparsers)`` and ``run(args)``."""
