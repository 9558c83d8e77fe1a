"""The job worker: claiming queued runs, computing each under a lease, storing each unit.
"""
