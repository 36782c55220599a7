"""The bundled demo scenario (meshes and job profile), installed as package data."""
