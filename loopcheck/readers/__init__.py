"""Readers: one module per open format (Gerber, Excellon, IPC-D-356) and the folder/zip discovery."""
