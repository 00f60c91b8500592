"""The package's contract: pure Python, typed refusals."""

import subprocess
import sys

import pytest

import engineering
from engineering import EngineeringInputError, IndeterminateError, InsufficientDataError


def test_engineering_imports_no_framework():
    code = (
        "import sys, engineering; "
        "bad = [m for m in sys.modules if m.split('.')[0] in ('django', 'rest_framework', 'celery')]; "
        "print(bad); sys.exit(1 if bad else 0)"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert result.returncode == 0, result.stdout


def test_every_public_name_is_exported_and_documented():
    for name in engineering.__all__:
        obj = getattr(engineering, name)
        if callable(obj) and not isinstance(obj, type):
            assert obj.__doc__, f"{name} has no docstring"


def test_error_hierarchy():
    assert issubclass(EngineeringInputError, ValueError)
    assert issubclass(IndeterminateError, EngineeringInputError)
    assert issubclass(InsufficientDataError, EngineeringInputError)


def test_positional_arguments_are_refused():
    with pytest.raises(TypeError):
        engineering.air_state(20.0, 50.0)  # type: ignore[misc]
