"""One module per area of the web app; each defines a Flask Blueprint ``bp``.

``showops.web.create_app`` registers every module here that has a ``bp``. Views
use ``showops.web.get_db()`` for the store and ``showops.web.auth.roles_required``
for who may see them; templates live in ``templates/<area>/<page>.html`` and extend
``base.html``.
"""
