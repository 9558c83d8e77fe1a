"""What people read: charts, the HTML run report, the reviewer pages, and the answer rows
shared by the API and the command line.
"""
