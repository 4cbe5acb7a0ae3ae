"""reportgen: power-factor-correction design reports from YAML project files."""

__version__ = "0.1.0"
