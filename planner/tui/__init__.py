"""The terminal editor (Textual). Imported only by ``crossplan [edit]``."""
