"""`flask backup FILE`: SQLite through its online backup API, PostgreSQL through pg_dump.

A plain copy of a live SQLite file can miss what still sits in the write-ahead log and can catch a
write half done; the backup API copies one consistent state, the log included, while others write.
"""
from __future__ import annotations

import os
import shutil
import sqlite3
import subprocess

import click
import sqlalchemy as sa

from models.audit.verify_ops import chain_head
from webapp.backup import bp
from webapp.extensions import db


@bp.cli.command("backup")
@click.argument("target", type=click.Path(dir_okay=False, writable=True))
def backup(target: str):
    """Write a consistent copy of the database to TARGET (a new file)."""
    if os.path.exists(target):
        raise click.ClickException(f"target: {target} already exists; choose a new file.")
    url = db.engine.url
    if url.get_backend_name() == "sqlite":
        _sqlite_backup(url.database, target)
    elif url.get_backend_name() == "postgresql":
        _pg_dump(url, target)
    else:
        raise click.ClickException(f"No backup method for {url.get_backend_name()} databases.")
    click.echo(f"Backup written to {target}. The trail's head at about that time: "
               f"{chain_head(db.session).line()}")
    click.echo("Keep AUDIT_KEY safe as well, but apart from the backup: without it the copy "
               "cannot be verified.")


def _sqlite_backup(source: str, target: str) -> None:
    """Copy one consistent state of a live SQLite database (with its write-ahead log) to a new file."""
    with sqlite3.connect(source, timeout=30) as src, sqlite3.connect(target) as dst:
        src.backup(dst)  # all pages in one step: one snapshot, writers carry on meanwhile (WAL)
        dst.execute("PRAGMA journal_mode=DELETE")  # one self-contained file
        if (check := dst.execute("PRAGMA integrity_check").fetchone()[0]) != "ok":
            raise click.ClickException(f"The copy failed its integrity check: {check}")


def _pg_command(url: sa.URL, target: str) -> list[str]:
    """The pg_dump command line (custom format, for pg_restore); the password goes by PGPASSWORD."""
    plain = url.set(drivername="postgresql", password=None).render_as_string(hide_password=False)
    return ["pg_dump", "--format=custom", "--no-owner", f"--file={target}", f"--dbname={plain}"]


def _pg_dump(url: sa.URL, target: str) -> None:
    """Run pg_dump when installed; otherwise say the command to run."""
    command = _pg_command(url, target)
    if shutil.which("pg_dump") is None:
        raise click.ClickException("pg_dump is not installed here. Run where it is: "
                                   + " ".join(command) + " (with PGPASSWORD set if needed)")
    env = {**os.environ, **({"PGPASSWORD": url.password} if url.password else {})}
    done = subprocess.run(command, env=env, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        raise click.ClickException(f"pg_dump failed: {done.stderr.strip()}")
