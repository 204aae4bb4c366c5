"""One module per CLI command: ``add_parser(subparsers)`` and ``run(args) -> exit code``.

A command only parses, calls the library and prints. Adding a command means
adding a module here and its name to :data:`COMMANDS`.
"""

COMMANDS = ["simulate", "optimize", "inputs", "sweep", "review", "bench"]
