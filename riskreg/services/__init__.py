"""Use cases of the register; they own transactions. The audit trail is written
by the session hook installed with :func:`riskreg.services.audit.install`."""
