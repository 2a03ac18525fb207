"""Command-line interface: one module per command, no measurement logic here."""
