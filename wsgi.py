"""Entry point for `flask` and WSGI servers."""
from webapp import create_app

app = create_app()
