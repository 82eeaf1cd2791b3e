"""The ``wakeyard`` command: run a case locally, or start the service parts."""
