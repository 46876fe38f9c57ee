"""handcheck.worksheet."""
