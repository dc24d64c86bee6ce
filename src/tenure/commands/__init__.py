"""The commands of the ``tenure`` command line (``tenure.cli`` is the front: ``main`` and error handling)."""
