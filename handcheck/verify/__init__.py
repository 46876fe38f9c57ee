"""handcheck.verify."""
