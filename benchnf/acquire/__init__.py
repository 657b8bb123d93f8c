"""Acquisition with a sound card through sounddevice (PortAudio), imported only when used."""
