"""The project builds into a wheel that holds the app and its migrations and runs from anywhere."""
import os
import shutil
import sqlite3
import subprocess
import sys
import sysconfig
import zipfile
from pathlib import Path

import pytest
from alembic.script import ScriptDirectory

ROOT = Path(__file__).resolve().parent.parent
SOURCES = ("pyproject.toml", "webapp", "models", "migrations")


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    """A wheel built from a copy of the checkout (the build leaves no files in the checkout)."""
    source = tmp_path_factory.mktemp("source")
    for name in SOURCES:
        if (ROOT / name).is_dir():
            shutil.copytree(ROOT / name, source / name, ignore=shutil.ignore_patterns("__pycache__"))
        else:
            shutil.copy(ROOT / name, source / name)
    out = tmp_path_factory.mktemp("wheel")
    # No build isolation: the test extra's setuptools builds it, so no network is needed.
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--quiet", "--no-deps", "--no-build-isolation",
                    "--wheel-dir", str(out), str(source)], check=True, cwd=source, timeout=120)
    (built,) = out.glob("*.whl")
    return built


def _tracked(folder: str, pattern: str) -> set[str]:
    """Files of the checkout under a folder, as paths inside the wheel (not .keep placeholders)."""
    return {p.relative_to(ROOT).as_posix() for p in (ROOT / folder).glob(pattern)
            if p.is_file() and "__pycache__" not in p.parts and not p.name.startswith(".")}


def test_the_wheel_holds_the_app_its_domain_and_its_migrations(wheel):
    names = set(zipfile.ZipFile(wheel).namelist())
    expected = (_tracked("webapp", "**/templates/**/*") | _tracked("webapp", "static/*")
                | _tracked("models", "**/*.py") | _tracked("webapp", "**/*.py")
                | _tracked("migrations", "versions/*.py")
                | {"migrations/alembic.ini", "migrations/script.py.mako", "migrations/env.py"})
    # A few by name, so an empty glob cannot pass the test unnoticed.
    assert {"webapp/templates/base.html", "webapp/static/logbook.css", "models/core/base.py",
            "models/exposure/__init__.py", "migrations/versions/0001_initial_schema.py"} <= expected
    assert sorted(expected - names) == []
    assert not any(name.startswith(("tests/", "bench/")) for name in names)


def _venv_reusing_our_dependencies(folder: Path) -> Path:
    """A fresh venv whose only extra path is this venv's site-packages (for Flask & co)."""
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(folder)], check=True, timeout=60)
    python = folder / "bin" / "python"
    purelib = subprocess.run([str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                             check=True, capture_output=True, text=True).stdout.strip()
    # A path line in a .pth file adds the folder but runs none of its own .pth files, so this
    # checkout's editable install stays out of the new venv.
    Path(purelib, "shared-dependencies.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    return python


def test_an_installed_wheel_migrates_and_serves_from_another_folder(wheel, tmp_path):
    python = _venv_reusing_our_dependencies(tmp_path / "venv")
    subprocess.run([sys.executable, "-m", "pip", "--python", str(python), "install", "--quiet",
                    "--no-deps", "--ignore-installed", str(wheel)], check=True, timeout=120)
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    database = tmp_path / "installed.sqlite"
    env = {k: v for k, v in os.environ.items() if k not in {"PYTHONPATH", "FLASK_APP", "DATABASE_URL"}}
    env.update(DATABASE_URL=f"sqlite:///{database}", SECRET_KEY="test", LAB_TIMEZONE="Europe/Berlin")

    def run(*args):
        return subprocess.run([str(python), *args], cwd=elsewhere, env=env, capture_output=True,
                              text=True, timeout=120)

    upgraded = run("-m", "flask", "--app", "webapp:create_app", "db", "upgrade")
    assert upgraded.returncode == 0, upgraded.stderr
    with sqlite3.connect(database) as conn:
        head = ScriptDirectory(str(ROOT / "migrations")).get_current_head()
        assert conn.execute("SELECT version_num FROM alembic_version").fetchall() == [(head,)]
        assert conn.execute("SELECT timezone FROM lab_settings").fetchall() == [("Europe/Berlin",)]

    served = run("-c", (
        "import webapp; from webapp import create_app\n"
        "client = create_app().test_client()\n"
        "login, css = client.get('/login'), client.get('/static/logbook.css')\n"
        "print(webapp.__file__, login.status_code, css.status_code, b'does not replace' in login.data)"))
    assert served.returncode == 0, served.stderr
    where, login_status, css_status, caution = served.stdout.split()
    assert Path(where).is_relative_to(tmp_path / "venv")
    assert (login_status, css_status, caution) == ("200", "200", "True")
