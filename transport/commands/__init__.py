"""The transport's ``rowcast`` subcommands: ``stream`` and ``ports``."""
