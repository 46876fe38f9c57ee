"""handcheck.solve."""
