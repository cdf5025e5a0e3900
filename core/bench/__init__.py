"""The bench: measured responses, fitting parts to them, and the op-amp shelf with its checks."""
