"""``foldline demo``: the invented scenario, end to end through the service.
"""
