"""benchlog: measure a board's reverse-polarity protection element and judge it against its spec."""

__version__ = "0.1.0"
