"""nodeterm: node-voltage analysis of op-amp circuits in the terminal."""

__version__ = "0.1.0"
