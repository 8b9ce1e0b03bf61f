"""The circuit and its file: expression language, model, part kinds, TOML loader, size limits."""
