"""Settings: ``base`` (embedded default and development), ``production``, ``test``."""
