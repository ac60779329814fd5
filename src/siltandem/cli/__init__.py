"""The command line: argparse commands that parse, call the API, print and exit (0 done, 2 bad
input, 1 internal fault).
"""
