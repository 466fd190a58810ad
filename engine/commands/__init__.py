"""One module per `tamis` subcommand; each offers ``run(args, ctx) -> int``."""
