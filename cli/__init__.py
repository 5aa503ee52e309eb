"""leapwright's command line: a thin shell over the core."""
