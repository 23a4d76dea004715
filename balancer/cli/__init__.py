"""The command line: the only place with argument parsing, printing and exit statuses."""
