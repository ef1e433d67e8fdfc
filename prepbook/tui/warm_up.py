"""Work the terminal app does once, in the background, after its first frame.

Why: two costs used to land in the middle of a key press.
- The first computation of any kind imported numpy and ``uncertainties`` (and, until
  the pH solver became plain bisection, ``scipy.optimize``: 0.3 s).
  :func:`import_heavy_modules` imports them right after the first frame, while the
  person reads the board.
- Python's cyclic garbage collector walked the app's few hundred thousand long-lived
  objects (modules, the catalog, the first screens) on every full collection, pauses of
  150-175 ms at random moments. :func:`settle_memory` collects once and then
  ``gc.freeze()`` moves everything alive at that point out of the collector's sight
  (the Python documentation's own advice for long-lived processes), so a later full
  collection walks only what screens create afterwards. Nothing is switched off: the
  collector still runs and still frees cycles made after the freeze.
"""

from __future__ import annotations

import gc
import importlib

# What the first computation needs (measured with `python -X importtime`).
HEAVY_MODULES = ("numpy", "uncertainties", "prepbook.chem.equilibria",
                 "prepbook.chem.standardization", "prepbook.rules.evaluation")


def import_heavy_modules() -> None:
    for name in HEAVY_MODULES:
        importlib.import_module(name)


def settle_memory() -> None:
    gc.collect()
    gc.freeze()


def warm_up() -> None:
    """Both, in this order (so the imported modules are frozen too), on the app's own
    thread: about 0.1 s in all, once, before a person has read the first row.

    Not in a worker thread, as it was while scipy's 0.3 s import was part of it: a thread
    running Python beside the screen makes every database call of the screen wait its
    turn for the interpreter (up to 5 ms each), so a batch opened meanwhile took twice as
    long (440 ms against 220 ms, tests/benchmarks/tui_bench.py)."""
    import_heavy_modules()
    settle_memory()
