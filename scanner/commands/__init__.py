"""The command line: one click command per module, each a thin call into the library
(``scanner.cli`` registers them). In: arguments and options. Out: terminal text, files, exit status.
"""
