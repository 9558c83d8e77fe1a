"""The assessment package's public names and its dependencies."""

import subprocess
import sys

import backtest.assessment as assessment

CHECK = """
import sys
import backtest.assessment
print(",".join(m for m in ("fastapi", "sqlalchemy", "starlette", "service", "storage")
               if m in sys.modules))
"""


def test_every_public_name_is_exported():
    assert all(callable(getattr(assessment, name)) for name in assessment.__all__)


def test_assessment_imports_no_web_or_database_framework():
    out = subprocess.run([sys.executable, "-c", CHECK], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == ""
