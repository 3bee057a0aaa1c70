"""Simulated against measured ringing at a switching node.

``metrics`` finds the edges of a waveform and measures the ring after each
(frequency, damping, overshoot, settling); ``scope_csv`` reads oscilloscope
exports; ``fit`` turns a measured ring into the loop inductance and resistance
that would produce it; ``compare`` lines measured edges up with simulated ones.
"""
