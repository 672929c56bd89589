"""numba kernels on plain arrays: no validation, no allocation inside step loops."""
