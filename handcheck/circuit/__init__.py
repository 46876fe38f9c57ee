"""handcheck.circuit."""
