"""What the service does, for the HTTP API, the command line and the worker alike: each use
case checks its input and owns its transaction (reads in one, writes in one that holds the
store's write lock), so no entry point opens storage sessions itself.
"""
