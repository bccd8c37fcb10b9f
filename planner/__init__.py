"""crossplan: plan multi-band loudspeaker crossovers and EQ in a terminal."""
__version__ = "0.1.0"
