"""Synthetic speech, noise and test signals (sweep, multitone, two-tone, tones)."""
