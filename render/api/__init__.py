"""The public functions behind every command; :mod:`cloakview` re-exports them."""
