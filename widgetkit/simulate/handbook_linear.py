"""Level constants of linear polyatomic molecules for demos and examples (cm⁻¹).

Values recalled from memory of the published high-resolution literature as
collected in the HITRAN database papers (Rothman et al.) and Herzberg,
*Infrared and Raman Spectra of Polyatomic Molecules* (1945); band origins
and B values are of good confidence (a few units in the last digit given),
ℓ-type doubling constants q and the B values of excited bending levels of
LOW confidence. They make realistic demo spectra; tests that use them as check
values must say "handbook value, from memory".

Level names are ``"v1 v2^l v3"`` for the triatomics (ℓ and, for CO₂, the g/u
symmetry follow from the label); acetylene's levels name their mode and give
ℓ and the inversion symmetry explicitly.
"""

from __future__ import annotations

__all__ = ["LINEAR_HANDBOOK"]

#: isotopologue name -> level name -> {"energy", "B", "D", ("q", "l", "inversion")}
LINEAR_HANDBOOK: dict[str, dict[str, dict]] = {
    "16O-12C-16O": {
        "00^00": {"energy": 0.0, "B": 0.39021894, "D": 1.33373e-7},
        "01^10": {"energy": 667.37998, "B": 0.39063900, "D": 1.35355e-7, "q": 6.1e-4},
        "00^01": {"energy": 2349.14291, "B": 0.38714139, "D": 1.33042e-7},
        "01^11": {"energy": 3004.01231, "B": 0.38756300, "D": 1.35e-7, "q": 6.2e-4},
    },
    "16O-13C-16O": {
        "00^00": {"energy": 0.0, "B": 0.39023754, "D": 1.3338e-7},
        "00^01": {"energy": 2283.48712, "B": 0.38719000, "D": 1.3305e-7},
    },
    "14N-14N-16O": {
        "00^00": {"energy": 0.0, "B": 0.41901127, "D": 1.7607e-7},
        "01^10": {"energy": 588.767838, "B": 0.41955700, "D": 1.78e-7, "q": 7.92e-4},
        "00^01": {"energy": 2223.756764, "B": 0.41555873, "D": 1.7494e-7},
        "01^11": {"energy": 2798.291, "B": 0.41605, "D": 1.77e-7, "q": 8.0e-4},
    },
    "1H-12C-14N": {
        "00^00": {"energy": 0.0, "B": 1.4782218, "D": 2.910e-6},
        "01^10": {"energy": 711.97969, "B": 1.4814200, "D": 2.97e-6, "q": 7.4886e-3},
        "02^00": {"energy": 1411.41324, "B": 1.4832600, "D": 3.0e-6},
        "02^20": {"energy": 1426.52955, "B": 1.4842100, "D": 3.1e-6},
        "00^01": {"energy": 3311.47720, "B": 1.4680000, "D": 2.9e-6},
    },
    "1H-12C-12C-1H": {
        "ground": {"energy": 0.0, "B": 1.1766464, "D": 1.627e-6, "inversion": "g"},
        "nu5": {"energy": 730.3331, "B": 1.1788600, "D": 1.64e-6, "l": 1, "q": 4.66e-3,
                "inversion": "u"},
        "nu3": {"energy": 3294.8399, "B": 1.1696600, "D": 1.61e-6, "inversion": "u"},
    },
}
