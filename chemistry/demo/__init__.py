"""The bundled demo scenario (an invented family shipped as a plug-in file)."""
