"""The command-line commands, one module each (``solve``, ``check``, ``response``,
``transient``, ``report``, ``screenshot``).  Each has ``add_parser(subparsers)`` and ``run(args) -> int``;
:mod:`app.cli` only parses and dispatches.  Commands read the one :class:`core.study.Study`
and format it; they never choose modes or solve anything themselves."""

#: command name -> module under app.commands, in the order ``--help`` lists them
COMMANDS = {
    "solve": "solve",
    "check": "check",
    "window": "window",
    "response": "response",
    "transient": "transient",
    "report": "report",
    "screenshot": "screenshot",
}
