"""Read-only pages for reviewers, rendered on the server: the series list, a series with its
versions, runs, ranking and charts, and a run's report. A browser signs in once with an API
key and then carries a signed session cookie; the pages need no JavaScript."""
