"""Hankel transforms of order zero by a digital linear filter.

``F(r) = int_0^inf f(lambda) J0(lambda r) d lambda`` is approximated by

    F(r) ~ (1 / r) sum_k w_k f(b_k / r),

with the 201-point filter of K. Key (abscissae ``b_k = exp((k - 100) delta)``,
weights ``w_k``). A filter is the right tool here because the kernels of
layered soil are smooth, non-oscillating functions of lambda (products of
exponentials from the layer recursion), which is the case the published
filters were designed for; quadrature of the oscillating integrand would
need many more kernel evaluations for the same accuracy.

The weights are data from

    K. Key, "Is the fast Hankel transform faster than quadrature?",
    Geophysics 77(3), F21-F30, 2012, doi:10.1190/geo2011-0237.1,

as distributed with the libdlf collection of digital linear filters
(copyright 2012 Kerry Key, licensed CC BY 4.0,
http://creativecommons.org/licenses/by/4.0/). Only the J0 column is used;
the abscissae are regenerated from the constant spacing of the published
base (first point 4.1185887075357082e-06, ratio 1.1320158709991752).

Measured accuracy on closed-form pairs (tests/test_hankel.py):
``int exp(-a l) J0(l r) dl = 1 / sqrt(r^2 + a^2)`` (Gradshteyn and Ryzhik
6.611.1) and the Gaussian pair (6.618.1); see :func:`hankel_j0` for the
treatment of ``f(0)`` that this accuracy needs.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["FILTER_BASE", "FILTER_J0", "SMALL_R", "filter_abscissae", "hankel_j0", "hankel_j0_near_axis"]

#: Below this ratio of r to the kernel's decay length the filter loses accuracy; use Gauss-Laguerre.
SMALL_R = 0.05

_LAG_T, _LAG_W = np.polynomial.laguerre.laggauss(80)

#: Ratio of successive abscissae of the filter.
_RATIO = 1.1320158709991752
#: Abscissae b_k (lambda * r) of the 201-point filter.
FILTER_BASE = np.exp((np.arange(201) - 100) * np.log(_RATIO))

#: J0 weights of the 201-point filter of Key (2012); data, CC BY 4.0.
FILTER_J0 = np.array(
    [
        1.5020099209519960e-03,
        -1.0381698214761684e-02,
        3.6840860097595164e-02,
        -8.9903380392274704e-02,
        1.7082286536833860e-01,
        -2.7115749656836280e-01,
        3.7649328091859574e-01,
        -4.7220778569122657e-01,
        5.4778211089647089e-01,
        -5.9823516853035097e-01,
        6.2345791612185331e-01,
        -6.2650436648257724e-01,
        6.1197225351173345e-01,
        -5.8470173866140451e-01,
        5.4911055789616858e-01,
        -5.0878861684860843e-01,
        4.6652106345430200e-01,
        -4.2426478870289325e-01,
        3.8339538911933357e-01,
        -3.4472344791723936e-01,
        3.0876891466890510e-01,
        -2.7570439368364807e-01,
        2.4562331000974616e-01,
        -2.1839207265400126e-01,
        1.9393194321380827e-01,
        -1.7198162962644575e-01,
        1.5242270280410272e-01,
        -1.3494945901825492e-01,
        1.1946763189654602e-01,
        -1.0565870880444576e-01,
        9.3482355548033913e-02,
        -8.2612525279836244e-02,
        7.3077763526174969e-02,
        -6.4536481281701225e-02,
        5.7096310621587334e-02,
        -5.0384859605213800e-02,
        4.4599557396733047e-02,
        -3.9316995063444334e-02,
        3.4838544754296139e-02,
        -3.0664946477420088e-02,
        2.7221072240291456e-02,
        -2.3901586108434601e-02,
        2.1281566646364738e-02,
        -1.8612484595521447e-02,
        1.6655386303461400e-02,
        -1.4472420076504743e-02,
        1.3057747649606617e-02,
        -1.1226286001060300e-02,
        1.0266818557930830e-02,
        -8.6738022421653585e-03,
        8.1103368670848164e-03,
        -6.6573628142085938e-03,
        6.4551189810889585e-03,
        -5.0524015117839084e-03,
        5.1989014270506263e-03,
        -3.7597430078747883e-03,
        4.2640545165292636e-03,
        -2.6994965688974474e-03,
        3.5928000560587229e-03,
        -1.8061291289989019e-03,
        3.1436470898586703e-03,
        -1.0244200001620755e-03,
        2.8888297674091743e-03,
        -3.0605070741955765e-04,
        2.8125907445050334e-03,
        3.9337862066047565e-04,
        2.9102041487017727e-03,
        1.1170884769911178e-03,
        3.1876763415953362e-03,
        1.9097806429850762e-03,
        3.6621020321465411e-03,
        2.8203783587849949e-03,
        4.3626885599390430e-03,
        3.9050024915686802e-03,
        5.3324923486866077e-03,
        5.2303399394270488e-03,
        6.6309348458396984e-03,
        6.8775540687037451e-03,
        8.3371689988226087e-03,
        8.9468564745410102e-03,
        1.0554326601376745e-02,
        1.1562765604509096e-02,
        1.3414536265660639e-02,
        1.4879837399735491e-02,
        1.7084241336519569e-02,
        1.9088092654441269e-02,
        2.1768513715084332e-02,
        2.4416120601223806e-02,
        2.7711234465350204e-02,
        3.1127164234404547e-02,
        3.5184140220277452e-02,
        3.9497913113638941e-02,
        4.4449762157204989e-02,
        4.9758433269983887e-02,
        5.5667457114992429e-02,
        6.1949790434151823e-02,
        6.8682064905571841e-02,
        7.5616743950118387e-02,
        8.2584983563572259e-02,
        8.9193635262987042e-02,
        9.4874686942005279e-02,
        9.8891681869094042e-02,
        1.0004294654495730e-01,
        9.7016844329802857e-02,
        8.7789596149914384e-02,
        7.0509767592855419e-02,
        4.2778853484849347e-02,
        3.5584532926218175e-03,
        -4.7210453264879347e-02,
        -1.0489787743225988e-01,
        -1.6020950407348281e-01,
        -1.9459781573132096e-01,
        -1.8490774599542381e-01,
        -1.0754165020025190e-01,
        3.6037727487476613e-02,
        1.9759013047489976e-01,
        2.6132313321851336e-01,
        1.1713996822458939e-01,
        -1.8758779281301441e-01,
        -3.0238114997462151e-01,
        4.8163135684567732e-02,
        3.6399529664885466e-01,
        -1.4910233461562913e-01,
        -2.6373490348543854e-01,
        4.0362661807718703e-01,
        -3.1409794650104578e-01,
        1.8179369405131079e-01,
        -9.0738718042631769e-02,
        4.2946487545160242e-02,
        -2.0586135807067835e-02,
        1.0392667161913182e-02,
        -5.6117848068723023e-03,
        3.2402025511569896e-03,
        -1.9858724388273777e-03,
        1.2807317326135252e-03,
        -8.6253791756068252e-04,
        6.0296590782143555e-04,
        -4.3548936996943465e-04,
        3.2375891570874245e-04,
        -2.4698212240059978e-04,
        1.9279062274925971e-04,
        -1.5357911509105972e-04,
        1.2453787849367440e-04,
        -1.0255126402954421e-04,
        8.5558482209476271e-05,
        -7.2170928476334345e-05,
        6.1436863283080017e-05,
        -5.2693349406473615e-05,
        4.5471255142623729e-05,
        -3.9433284158653591e-05,
        3.4332971164795619e-05,
        -2.9987212220165472e-05,
        2.6257657435614391e-05,
        -2.3037978256349448e-05,
        2.0245071331016652e-05,
        -1.7812925644382519e-05,
        1.5688305607849465e-05,
        -1.3827679492110470e-05,
        1.2195005442258958e-05,
        -1.0760110818279243e-05,
        9.4974857670959145e-06,
        -8.3853711343938338e-06,
        7.4050612540713192e-06,
        -6.5403682860228500e-06,
        5.7772102413267325e-06,
        -5.1032933218796731e-06,
        4.5078641320869195e-06,
        -3.9815111951817114e-06,
        3.5159993210292339e-06,
        -3.1041249680128287e-06,
        2.7395854235553632e-06,
        -2.4168587823583312e-06,
        2.1310948134441218e-06,
        -1.8780185742021288e-06,
        1.6538488252707735e-06,
        -1.4552318768651144e-06,
        1.2791890865306748e-06,
        -1.1230741959148155e-06,
        9.8453630538596172e-07,
        -8.6148574493190796e-07,
        7.5206242699701732e-07,
        -6.5460810334682633e-07,
        5.6764451596029765e-07,
        -4.8985884555184997e-07,
        4.2009674106879252e-07,
        -3.5736212641225517e-07,
        3.0082215969939671e-07,
        -2.4981510481639669e-07,
        2.0385823466866512e-07,
        -1.6265189071584773e-07,
        1.2607416700611311e-07,
        -9.4158417913450858e-08,
        6.7043911217063425e-08,
        -4.4891090827293947e-08,
        2.7761325666544702e-08,
        -1.5480404355710375e-08,
        7.5327300141098751e-09,
        -3.0524770418657847e-09,
        9.5877856096830783e-10,
        -2.0575286298055636e-10,
        2.2414416956474645e-11,
    ]
)


def filter_abscissae(r: np.ndarray) -> np.ndarray:
    """Wavenumbers ``lambda = b_k / r`` where the kernel is sampled, shape ``r.shape + (201,)``. [1/m]"""
    r = np.asarray(r, dtype=float)
    return FILTER_BASE / r[..., None]


def hankel_j0(kernel: Callable[[np.ndarray], np.ndarray], r: np.ndarray, at_zero=None) -> np.ndarray:
    """``int_0^inf f(lambda) J0(lambda r) d lambda`` for every ``r > 0``.

    Parameters
    ----------
    kernel : callable
        ``f(lambda)``, vectorised; called with an array of shape
        ``r.shape + (201,)`` and may return extra leading axes
        (shape ``(...,) + r.shape + (201,)``).
    r : array_like
        Horizontal distances, all positive. [m]
    at_zero : array_like, optional
        ``f(0)``, broadcastable to the result; evaluated as ``kernel(0)``
        when not given.

    Returns
    -------
    numpy.ndarray
        The transform, shape of ``kernel``'s result without the last axis.

    Notes
    -----
    The filter's weights sum to 1 - 7.7e-7, so a kernel with ``f(0) != 0``
    would carry that error into the long-range ``f(0) / r`` behaviour. The
    part ``f(0) exp(-lambda r)`` is therefore taken out and added back in
    closed form, ``f(0) / (r sqrt(2))`` (Gradshteyn and Ryzhik 6.611.1);
    what the filter sees vanishes at lambda = 0. With that, the measured
    error on the pairs in tests/test_hankel.py is below 1e-9 relative.
    """
    r = np.asarray(r, dtype=float)
    if np.any(r <= 0.0):
        raise ValueError("the filter needs r > 0")
    lam = filter_abscissae(r)
    vals = kernel(lam)
    if at_zero is None:
        f0 = np.asarray(kernel(np.zeros(r.shape + (1,))), dtype=float)[..., 0]
    else:
        f0 = np.asarray(at_zero, dtype=float)
    vals = vals - f0[..., None] * np.exp(-FILTER_BASE)
    return (vals @ FILTER_J0) / r + f0 / (r * np.sqrt(2.0))


def hankel_j0_near_axis(kernel: Callable[[np.ndarray], np.ndarray], r: np.ndarray, scale: np.ndarray) -> np.ndarray:
    """The same transform for ``r`` much smaller than the decay length of the kernel.

    With ``lambda = t / scale``, ``F(r) = (1/scale) int e^{-t} [e^{t} f(t/scale)] J0(t r/scale) dt``
    by 80-point Gauss-Laguerre quadrature. It suits kernels that decay at least as fast as
    ``exp(-lambda scale)`` with smooth factors, for which the bracket is smooth and bounded;
    the filter loses accuracy as ``r / scale`` falls (1e-7 relative at 1e-4 on the
    exponential pair), so this rule takes over below :data:`SMALL_R` (measured 1e-12 on
    closed-form pairs in tests/test_multilayer.py).

    Parameters
    ----------
    kernel : callable
        ``f(lambda)``, vectorised, called with shape ``r.shape + (80,)``.
    r, scale : array_like
        Distances and decay lengths (same shape). [m]
    """
    from scipy.special import j0

    r = np.asarray(r, dtype=float)
    scale = np.asarray(scale, dtype=float)
    t = _LAG_T
    lam = t / scale[..., None]
    vals = kernel(lam) * np.exp(t) * j0(t * (r / scale)[..., None])
    return (vals @ _LAG_W) / scale
