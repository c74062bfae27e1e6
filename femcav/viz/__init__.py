"""Pictures of meshes and results, rendered off-screen to image files."""
