"""`make bench`: invented studies at several sizes, served and measured against issue 14's targets.

Nothing here is imported by the app; the bench drives the app only through its command line
and over HTTP, so it keeps working while the app's internals move.
"""
