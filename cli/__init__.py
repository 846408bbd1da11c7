"""tunnelstack's command line: argument parsing and output, nothing numerical."""
