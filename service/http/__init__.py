"""The HTTP API: the application, its routes and schemas, problem documents, access control
and the answers' formats. Routes call :mod:`service.usecases`; they open no storage session.
"""
