"""Commands: one module per ``meshpress COMMAND``, each with ``add_parser(subparsers)`` and ``run(args)``.

In: the command line (files, units, options). Out: the printed table and the files written through
:mod:`meshpress.outputs`; bad input leaves as one line on stderr with exit status 2 (:mod:`meshpress.cli`).
"""
