"""The web page's session cookie: its name and the value derived from the service token."""
from __future__ import annotations

import hashlib
import hmac

UI_COOKIE = "heatscreen_ui"


def ui_cookie_value(token: str) -> str:
    return hmac.new(token.encode("utf-8"), b"heatscreen web page", hashlib.sha256).hexdigest()
