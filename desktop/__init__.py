"""Loadledger's window (PySide6 + pyqtgraph). It calls the engine and holds no domain logic."""
