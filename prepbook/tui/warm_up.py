"""Work the terminal app does once, in the background, after its first frame.

Why: two costs used to land in the middle of a key press.
- The first computation of any kind imported numpy and ``uncertainties`` (and, until
  the pH solver became plain bisection, ``scipy.optimize``: 0.3 s that also competed
  with the first screen a person opened). :func:`import_heavy_modules` imports them in
  a worker thread right after the first frame, while the person reads the board.
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
    """Both, in this order (so the imported modules are frozen too). Run in a thread."""
    import_heavy_modules()
    settle_memory()
