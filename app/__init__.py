"""kinestat.app: the Qt desktop app and the command line.

Importing this package does not import Qt: the command line's headless commands
(``kinestat check`` ...) stay free of it; Qt is imported only by the GUI modules.
"""
