"""Motor nameplate, machine model and simulator, thermal model."""
