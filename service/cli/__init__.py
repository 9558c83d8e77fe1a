"""The ``foldline`` command line (:mod:`service.cli.main`), one module per command group.
Commands call :mod:`service.usecases`; errors end as one line on stderr and exit code 2.
"""
