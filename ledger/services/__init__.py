"""Use cases shared by the command line and the console: open, record, status, check, log."""
