"""The Textual face. Only this package may import textual or rich."""
