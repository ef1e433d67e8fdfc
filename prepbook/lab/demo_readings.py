"""The demo lab's readings from instruments: a batch weighed on the simulated balance,
its endpoints taken from stored titration curves.

Everything here is invented: the balance is ``prepbook.devices.simulator`` served in
this process on a loopback socket, and the curves are computed with the equilibrium
model of ``prepbook.chem.equilibria`` (potassium hydrogen phthalate titrated with
sodium hydroxide) with a little random noise on the pH, written as a meter's export.
"""

from __future__ import annotations

import random
import tempfile
from datetime import datetime
from pathlib import Path

from prepbook.store.engine import Database

KHP_PKAS = (2.946, 5.409)  # the catalog's values for potassium hydrogen phthalate
KHP_MOLAR_MASS = 204.2212  # g/mol, C8H5KO4
SAMPLE_ML = 50.0
TRY_PORT = 47810  # where `prepbook instrument simulate-balance --port 47810` serves


def khp_curve(mass_g: float, purity: float, normality: float, *, seed: int) -> bytes:
    """A meter's CSV export of KHP titrated with sodium hydroxide of this normality:
    half-millilitre steps, 0.05 mL steps within 1 mL of the equivalence volume, pH with
    a standard deviation of 0.004 (invented)."""
    from prepbook.chem.equilibria import simulate_titration

    mol = mass_g * purity / KHP_MOLAR_MASS
    ve = 1000.0 * mol / normality
    coarse = [i * 0.5 for i in range(int((ve + 4.0) / 0.5) + 1)]
    fine = [round(ve - 1.0 + i * 0.05, 2) for i in range(41)]
    volumes = sorted({round(v, 2) for v in coarse + fine})
    ph = simulate_titration(volumes, pkas=KHP_PKAS,
                            sample_concentration_mol_per_l=mol * 1000.0 / SAMPLE_ML,
                            sample_ml=SAMPLE_ML, titrant_concentration_mol_per_l=normality,
                            initial_protons=1)
    noise = random.Random(seed)
    lines = ["Titration export (demo meter)", f"Sample: KHP {mass_g:.4f} g in 50 mL water",
             "", "Volume (mL),pH"]
    lines += [f"{v:.2f},{p + noise.gauss(0.0, 0.004):.3f}" for v, p in zip(volumes, ph,
                                                                           strict=True)]
    return ("\r\n".join(lines) + "\r\n").encode("ascii")


def weighed_batch(db: Database, *, actor: str, analyst: str, lot: str, balance: str,
                  burette: str, made_at: datetime, titrated_at: datetime,
                  late_reason: str) -> tuple[str, str]:
    """Make a sodium hydroxide batch and standardize it with masses read from the
    simulated balance and volumes from stored curves; (batch code, run code). The
    demo enters invented history at once: ``late_reason`` says so for any entry more
    than the lab's late-entry hours after its time."""
    from prepbook.devices.profiles import find_profile
    from prepbook.devices.simulator import SimulatedBalance, SocketServer
    from prepbook.lab import balances, batches, runs

    masses = ("0.8127", "0.8342", "0.7968")
    simulated = SimulatedBalance(find_profile("mark-first"), masses)
    server = SocketServer(simulated).start()
    try:
        balances.connect(db, actor=actor, code=balance, port=server.url, profile="mark-first")
        made = batches.make_batch(db, actor=analyst, spec="NaOH-0.1N", volume="1000",
                                  solute_mass="4.1", flask=None, balance=balance,
                                  notes="Weighed on the balance's serial line (simulated); "
                                  "endpoints from the meter's curves.",
                                  at=made_at.isoformat(timespec="minutes"),
                                  from_batch=None, aliquot=None, stock_volume=None,
                                  late_reason=late_reason)
        with tempfile.TemporaryDirectory() as folder:
            reps = []
            for i, mass in enumerate(masses, start=1):
                path = Path(folder) / f"naoh-khp-{i}.csv"
                path.write_bytes(khp_curve(float(mass), 0.9998, 0.09987, seed=i))
                # The second volume was read off the burette and typed; its curve checks it.
                reps.append(f"@balance:40.91@{path}" if i == 2 else f"@balance:@{path}")
            out = runs.standardize(db, actor=analyst, batch=made.batch, replicates=reps,
                                   lot=lot, balance=balance, burette=burette,
                                   temperature="20.5",
                                   at=titrated_at.isoformat(timespec="minutes"),
                                   late_reason=late_reason)
    finally:
        server.stop()
    balances.connect(db, actor=actor, code=balance, port=f"socket://127.0.0.1:{TRY_PORT}",
                     profile="mark-first")
    assert out.run is not None
    return made.batch, out.run
