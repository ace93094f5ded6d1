"""lantern from Python: distances (and, to come, likelihoods, fits and samples)
computed by lantern's C library, with numpy arrays in and out.

    >>> import lantern
    >>> d = lantern.distance("lcdm-flat", [0.1, 0.5, 1.0], h0=70, omega_m=0.3)
    >>> d["distmod"]            # the distance modulus at each redshift, mag

Errors are Python exceptions carrying lantern's message as the command line
prints it: ValueError for bad input, RuntimeError for a failed computation.
Build with `make python` (into build/python/); `make install` installs it.
"""
import numpy as _np

from . import _lantern

__version__ = _lantern.version

#: The cosmological models, by the names the command line uses.
MODELS = tuple(_lantern.models())

#: The keys of distance()'s result: the columns of `lantern distance --format
#: csv`, in its order.
DISTANCE_COLUMNS = ("z", "comoving_mpc", "transverse_mpc", "luminosity_mpc", "angular_mpc",
                    "distmod", "lookback_gyr", "age_gyr", "hubble_km_s_mpc")


def distance(model, z, **params):
    """Distances, times and H(z) of one model at the redshifts z.

    model: a model name (see MODELS), e.g. "lcdm-flat", "w0wa".
    z: a number or a 1-D sequence of redshifts >= 0, in any order (kept).
    params: the model's parameters by name (h0, omega_m, omega_de, w0, wa,
        t_cmb, n_eff, m_nu, omega_b_h2), as `lantern distance --set`; the
        others keep lantern's defaults. omega_* are density fractions today.

    Returns a dict of 1-D float arrays keyed by DISTANCE_COLUMNS: z; comoving,
    transverse comoving, luminosity and angular-diameter distances (Mpc);
    the distance modulus (mag); lookback time and age at z (Gyr; an infinite
    age, a universe without a big bang, is inf); H(z) (km/s/Mpc).
    """
    zs = _np.atleast_1d(_np.asarray(z, dtype=float))
    if zs.ndim != 1:
        raise ValueError("distance: z must be a number or a 1-D sequence")
    return _lantern.distance(str(model), zs, {str(k): float(v) for k, v in params.items()})
