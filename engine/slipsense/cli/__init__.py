"""Command-line interface: one module per subcommand, no maths here."""
