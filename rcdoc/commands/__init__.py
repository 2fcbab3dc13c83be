"""Commands: the command line and the build, check, diff and init commands."""
