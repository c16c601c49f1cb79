"""What the application holds, without Qt: the loaded datasets and the trajectory state."""
