"""Readers for data files referenced from a project (CSV captures, intervals, bills).

Each reader takes an already-resolved path inside the project (the loader
checks that it does not escape the project folder) and the name to show in
messages, and raises :class:`reportgen.errors.InputError` with
``file:line:col`` problems for anything wrong in the file.
"""
