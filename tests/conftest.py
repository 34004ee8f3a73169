"""Shared test set-up. pytest puts this folder on sys.path, so the small helper modules
beside it (``_synthetic``) import by name from any test folder."""
