"""clockplan: choose oscillators and clock-tree settings so every peripheral is in tolerance."""

__version__ = "0.1.0"
