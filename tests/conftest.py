"""Shared fixtures: a network guard, the demo scenario's files, and a targets-table builder."""

import socket
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before any test touches astropy)

DEMO_DIR = Path(vigil.__file__).parent / "data" / "demo"


@pytest.fixture(autouse=True)
def _vigil_warning_filters():
    """Re-apply vigil's import-time warning filters: pytest resets filters around each test,
    and the run should look as it does for a user (no far-future 'dubious year' noise)."""
    vigil.offline.configure_offline()


@pytest.fixture
def no_network(monkeypatch):
    """Make every outgoing socket connection fail loudly, so a test proves it ran offline."""

    def refuse(self, address, *args, **kwargs):
        raise RuntimeError(f"network access attempted in a test: {address!r}")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket.socket, "connect_ex", refuse)


@pytest.fixture(scope="session")
def demo_sites():
    """The demo's invented sites, read through vigil's own reader."""
    from vigil.catalog import read_sites

    return read_sites(DEMO_DIR / "sites.toml")


@pytest.fixture(scope="session")
def make_targets():
    """Builder of a targets table as `catalog.read_targets` returns it. Each row gives at least
    name, ra_deg, dec_deg and t0_bjd_tdb; the rest default to a 10 d period known to 1e-7 d."""
    defaults = {"t0_err_d": 1e-6, "period_d": 10.0, "period_err_d": 1e-7, "duration_h": 2.0,
                "t0_period_cov_d2": 0.0}

    def build(*rows: dict) -> pd.DataFrame:
        return pd.DataFrame([{**defaults, **row} for row in rows])

    return build


def random_targets(n: int, seed: int, name: str, periods_d, t0_base: float, t0_err_d, duration_h) -> pd.DataFrame:
    """n invented targets spread uniformly over the sphere, log-uniform periods in `periods_d`,
    t0 within one period after `t0_base`; `name` is formatted with the target's index."""
    rng = np.random.default_rng(seed)
    period = np.exp(rng.uniform(np.log(periods_d[0]), np.log(periods_d[1]), n))
    return pd.DataFrame({
        "name": [name.format(i) for i in range(n)],
        "ra_deg": rng.uniform(0.0, 360.0, n),
        "dec_deg": np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n))),  # uniform over the sphere
        "t0_bjd_tdb": t0_base + rng.uniform(0.0, 1.0, n) * period,
        "t0_err_d": rng.uniform(*t0_err_d, n),
        "period_d": period,
        "period_err_d": rng.uniform(1e-7, 1e-5, n),
        "duration_h": rng.uniform(*duration_h, n),
        "t0_period_cov_d2": 0.0,
    })
