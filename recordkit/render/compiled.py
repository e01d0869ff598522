"""Compiled templates kept between runs: compiling the theme's and our templates is a third of a second
that every build would otherwise spend again.

Compiled templates are code, so they are kept only in this user's own cache folder ($XDG_CACHE_HOME or
~/.cache, recordkit/templates, mode 0700), never in a records folder that others may write to or share.
An environment's compile settings (its extensions, escaping and whitespace options) name a folder of its
own, since the same template compiles differently under other settings; Jinja checks each entry against
the template's source and its own and Python's versions.
"""
from __future__ import annotations

import os
from pathlib import Path

import jinja2

from ..hashes import digest


def keep_compiled(env: jinja2.Environment) -> jinja2.Environment:
    """Give `env` a bytecode cache in this user's cache folder (nothing when it cannot be made)."""
    escape = env.autoescape if isinstance(env.autoescape, bool) else getattr(env.autoescape, "__qualname__", "?")
    settings = [jinja2.__version__, sorted(env.extensions), escape, env.trim_blocks,
                env.lstrip_blocks, env.keep_trailing_newline, getattr(env.finalize, "__qualname__", None),
                env.block_start_string, env.variable_start_string, env.comment_start_string,
                env.line_statement_prefix, env.line_comment_prefix, env.newline_sequence, env.optimized]
    home = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "recordkit" / "templates"
    folder = home / digest(settings)
    try:
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
        os.chmod(home, 0o700)
        if not os.access(folder, os.W_OK) or folder.stat().st_uid != os.getuid():
            return env
    except OSError:
        return env
    env.bytecode_cache = jinja2.FileSystemBytecodeCache(str(folder))
    return env
