"""Test set-up shared by every test folder."""
import scanner  # noqa: F401  (sets single-threaded BLAS before numpy loads, as the command does)
