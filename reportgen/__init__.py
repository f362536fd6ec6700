"""reportgen: score proficiency-testing rounds in decision disciplines and issue the reports."""

__version__ = "0.1.0"
