"""Layout pieces, one module per section of the screen."""
