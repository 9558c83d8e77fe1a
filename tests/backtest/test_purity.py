"""The computation core imports neither the HTTP layer nor the database layer."""

import subprocess
import sys

CHECK = """
import sys
import backtest.demo, backtest.engine, backtest.ledger, backtest.tidy
print(",".join(m for m in ("fastapi", "sqlalchemy", "starlette", "service", "storage")
               if m in sys.modules))
"""


def test_backtest_imports_no_web_or_database_framework():
    out = subprocess.run([sys.executable, "-c", CHECK], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == ""
