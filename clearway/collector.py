"""Pause Python's cyclic garbage collector around allocation-heavy stages.

Reading a large drawing creates hundreds of thousands of long-lived ezdxf objects; each
generation-2 pass of the cyclic collector rescans all of them, which costs about a fifth of
the parse on a 20,000-bay warehouse. Rendering the outputs builds millions of small lists,
dicts and XML elements that live until the file's bytes are made (a coordinate pair is a
list), so the collector's passes promote and rescan them again and again: a sixth of the
rendering of the mixed suite drawing at 5,000 and 10,000 bays. The conversion that follows
the reading would rescan the ezdxf documents, which hold themselves in reference cycles,
and the roadmap stage makes next to no cycles (539 passes freed 23 objects on that floor at
20,000 bays): both run paused too, and a forked child (clearway.side_by_side) runs
without the collector, its exit freeing what is left. Reference counting still
frees everything that is not in a cycle while the collector is paused, and the collector
resumes (if it was running) when the stage ends, normally or by an exception.
"""

from __future__ import annotations

import contextlib
import gc


@contextlib.contextmanager
def paused_collector():
    """Disable the cyclic garbage collector for the duration; restore its previous state.

    Usable as a context manager or as a decorator. Nested use is harmless: only the
    outermost pause turns the collector back on.

    Examples
    --------
    >>> import gc
    >>> with paused_collector():
    ...     gc.isenabled()
    False
    >>> gc.isenabled()
    True
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
