"""The web page (plain ES modules, no build step): package data of ``wakeyard.web``, served by the API at ``/``."""
