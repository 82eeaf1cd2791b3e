"""What the API and the workers share: settings, the job store, job states, the Celery app factory, the disk reserve.

``api`` and ``worker`` import this package and never each other; it imports only ``solver`` of wakeyard's own.
"""
