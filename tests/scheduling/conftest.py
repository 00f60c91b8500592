import pytest

from scheduling.services import task_library_install


@pytest.fixture
def library(db):
    return {t.code: t for t in task_library_install()}
