"""Files written whole or not at all: a reader never sees half a bundle, sheet or backup."""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def written_whole(target: Path) -> Iterator[Path]:
    """A temporary file beside `target` to write in the block; it takes `target`'s name when
    the block ends well, and is removed whatever happens (an older `target` is left as it was).

    A failure to write names `target`, the file the user asked for, not the temporary one.
    """
    partial = target.with_name(f".{target.name}.partial-{os.getpid()}")
    try:
        yield partial
        partial.replace(target)
    except OSError as exc:
        raise OSError(exc.errno, exc.strerror, str(target)) from exc
    finally:
        partial.unlink(missing_ok=True)
