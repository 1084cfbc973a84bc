"""Does the unentangled bead-spring (Rouse) description hold?  The evidence, the verdict rule and ``diagnose``."""
