"""Sub-commands of the CLI (see contactplan.cli)."""
