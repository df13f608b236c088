"""The bundled sample inputs of the invented Karsvale Uplands (data only; see README.md)."""
