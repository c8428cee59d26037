"""Words, plans and styles as data. Installed as the package ``narrator.templates``."""
