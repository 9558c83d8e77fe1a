"""Who may use the store: API keys (hashed secrets, roles, revocations) and reviewer page
sessions ended on the server.
"""

from storage.access.keys import KeyInfo, create_key, find_credentials, list_keys, revoke_key
from storage.access.sign_outs import record_sign_out, signed_out

__all__ = [
    "KeyInfo",
    "create_key",
    "find_credentials",
    "list_keys",
    "record_sign_out",
    "revoke_key",
    "signed_out",
]
