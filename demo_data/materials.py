"""The demo materials: band lists for generated spectra and the specification documents built on them.

Band positions follow the group-frequency tables in the project's domain notes (standard university IR
tables: UCLA WebSpectra, UMass OWL) and the usual literature assignments for these excipients and
solvents (from memory). Heights and widths are invented so the spectra look like diamond-ATR or
thin-film measurements; they are not measured values. The specifications are written in the
document format of the evaluator (issue 4): required bands, forbidden bands, fingerprint, quality.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from demo_data.synth import BandShape


def _b(position: float, height: float, fwhm: float, eta: float = 0.5, note: str = "") -> BandShape:
    return BandShape(position=position, height=height, fwhm=fwhm, eta=eta, note=note)


@dataclass(frozen=True, kw_only=True)
class DemoMaterial:
    code: str
    name: str
    description: str
    preparation: str
    bands: tuple[BandShape, ...]
    required_bands: tuple[dict[str, Any], ...]
    forbidden_bands: tuple[dict[str, Any], ...]
    fingerprint_regions: tuple[tuple[float, float], ...] = ((1500.0, 650.0),)
    min_score: float = 0.95
    spec_range: tuple[float, float] = (4000.0, 650.0)

    def specification(self, *, version: int = 1) -> dict[str, Any]:
        """The specification document (issue 4 format) for this material."""
        return {
            "material": self.code,
            "name": self.name,
            "version": version,
            "preparation": self.preparation,
            "range": [self.spec_range[0], self.spec_range[1]],
            "exclude": [],
            "required_bands": [dict(r) for r in self.required_bands],
            "forbidden_bands": [dict(f) for f in self.forbidden_bands],
            "fingerprint": {
                "metric": "pearson",
                "regions": [[hi, lo] for hi, lo in self.fingerprint_regions],
                "min_score": self.min_score,
            },
            "quality": {"max_absorbance": 1.5, "min_absorbance": 0.1},
        }


def _req(label: str, hi: float, lo: float, min_rel: float, **extra: Any) -> dict[str, Any]:
    return {"label": label, "from": hi, "to": lo, "min_relative_intensity": min_rel, **extra}


def _forbid(label: str, hi: float, lo: float, max_rel: float) -> dict[str, Any]:
    return {"label": label, "from": hi, "to": lo, "max_relative_intensity": max_rel}


OH_BONDED = "O-H stretch, hydrogen-bonded"
CH_ALKANE = "C-H stretch, alkane"
CARBONYL_ANY = "carbonyl (oxidation product or wrong material)"
CARBONYL_SUGAR = "carbonyl (oxidation or degradation product)"

MICROCRYSTALLINE_CELLULOSE = DemoMaterial(
    code="EXC-101",
    name="Microcrystalline cellulose",
    description="Tablet diluent and binder; white powder, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(3335, 0.20, 300, 0.3, "O-H stretch, H-bonded"), _b(2895, 0.07, 70, 0.4, "C-H stretch"),
        _b(1640, 0.025, 60, 0.5, "adsorbed water"), _b(1428, 0.06, 25), _b(1368, 0.08, 20), _b(1335, 0.07, 18),
        _b(1315, 0.08, 18), _b(1202, 0.05, 15), _b(1160, 0.20, 20, 0.5, "C-O-C glycosidic"),
        _b(1105, 0.30, 25), _b(1055, 0.60, 25, 0.5, "C-O stretch"), _b(1030, 0.75, 25, 0.5, "C-O stretch"),
        _b(1000, 0.42, 18), _b(895, 0.07, 12, 0.5, "beta-glycosidic C-H"), _b(665, 0.15, 60, 0.3, "O-H out of plane"),
    ),
    required_bands=(
        _req(OH_BONDED, 3550, 3200, 0.10, min_width=100),
        _req(CH_ALKANE, 3000, 2850, 0.03),
        _req("C-O stretch, alcohols and ethers", 1100, 1000, 0.50),
    ),
    forbidden_bands=(_forbid(CARBONYL_SUGAR, 1760, 1700, 0.05),),
)

LACTOSE_MONOHYDRATE = DemoMaterial(
    code="EXC-102",
    name="Lactose monohydrate",
    description="Tablet and capsule filler; white crystalline powder, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(3525, 0.10, 30, 0.5, "O-H of water of crystallisation"), _b(3380, 0.14, 80), _b(3300, 0.15, 260, 0.3),
        _b(2980, 0.04, 30), _b(2900, 0.05, 40), _b(1655, 0.04, 40, 0.5, "water bending"),
        _b(1425, 0.05, 20), _b(1340, 0.06, 20), _b(1260, 0.06, 20), _b(1200, 0.07, 15), _b(1160, 0.15, 15),
        _b(1115, 0.25, 15), _b(1090, 0.30, 15), _b(1070, 0.35, 15), _b(1030, 0.60, 20), _b(1000, 0.40, 15),
        _b(950, 0.15, 12), _b(915, 0.12, 12), _b(875, 0.18, 10), _b(780, 0.12, 12),
    ),
    required_bands=(
        _req("O-H stretch (water of crystallisation, hydroxyls)", 3550, 3200, 0.10),
        _req("C-O stretch, alcohols and ethers", 1100, 1000, 0.50),
    ),
    forbidden_bands=(_forbid(CARBONYL_SUGAR, 1760, 1700, 0.05),),
)

MAGNESIUM_STEARATE = DemoMaterial(
    code="EXC-103",
    name="Magnesium stearate",
    description="Tablet lubricant; soft white powder, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(2955, 0.15, 15, 0.5, "CH3 asym. stretch"), _b(2917, 0.70, 18, 0.5, "CH2 asym. stretch"),
        _b(2849, 0.50, 12, 0.5, "CH2 sym. stretch"), _b(1575, 0.45, 30, 0.5, "carboxylate asym. stretch"),
        _b(1540, 0.20, 25), _b(1465, 0.20, 12, 0.5, "CH2 scissoring"), _b(1420, 0.12, 15, 0.5, "carboxylate sym."),
        *(_b(1330 - 20 * i, 0.03, 8) for i in range(8)), _b(1110, 0.03, 15), _b(720, 0.12, 8, 0.5, "CH2 rocking"),
    ),
    required_bands=(
        _req("CH2 asymmetric stretch", 2935, 2900, 0.50),
        _req("CH2 symmetric stretch", 2870, 2835, 0.30),
        _req("carboxylate asymmetric stretch", 1600, 1530, 0.30),
    ),
    forbidden_bands=(_forbid("carboxylic acid C=O (free fatty acid)", 1720, 1690, 0.10),),
)

POVIDONE = DemoMaterial(
    code="EXC-104",
    name="Povidone K30",
    description="Binder; hygroscopic white powder, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(3440, 0.10, 350, 0.3, "absorbed water"), _b(2950, 0.12, 40), _b(2880, 0.06, 30),
        _b(1655, 0.85, 40, 0.3, "amide I C=O"), _b(1495, 0.10, 15), _b(1460, 0.18, 15), _b(1423, 0.25, 15),
        _b(1372, 0.10, 12), _b(1315, 0.10, 15), _b(1285, 0.25, 15, 0.5, "C-N stretch"), _b(1228, 0.07, 15),
        _b(1170, 0.05, 15), _b(1018, 0.05, 15), _b(933, 0.04, 12), _b(845, 0.05, 12), _b(735, 0.07, 12),
    ),
    required_bands=(
        _req("amide I C=O (lactam)", 1690, 1630, 0.50),
        _req(CH_ALKANE, 3000, 2850, 0.05),
    ),
    forbidden_bands=(_forbid("ester C=O (e.g. a vinyl acetate copolymer)", 1780, 1725, 0.08),),
)

ISOPROPANOL = DemoMaterial(
    code="SOL-201",
    name="Isopropanol",
    description="Granulation and cleaning solvent; clear liquid, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(3340, 0.45, 250, 0.3, "O-H stretch, H-bonded"), _b(2970, 0.35, 25), _b(2932, 0.12, 25), _b(2882, 0.10, 25),
        _b(1465, 0.12, 20), _b(1380, 0.14, 12), _b(1369, 0.13, 12), _b(1340, 0.10, 15), _b(1310, 0.08, 20),
        _b(1160, 0.22, 15), _b(1128, 0.30, 15, 0.5, "C-O stretch, secondary alcohol"), _b(950, 0.35, 12),
        _b(817, 0.25, 12),
    ),
    required_bands=(
        _req(OH_BONDED, 3550, 3200, 0.30, min_width=100),
        _req(CH_ALKANE, 3000, 2850, 0.30),
        _req("C-O stretch, secondary alcohol", 1170, 1110, 0.30),
    ),
    forbidden_bands=(_forbid("carbonyl (acetone or other oxidation product)", 1760, 1690, 0.05),),
)

ETHANOL = DemoMaterial(
    code="SOL-202",
    name="Ethanol 96 %",
    description="Granulation solvent; clear liquid, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(3325, 0.45, 260, 0.3, "O-H stretch, H-bonded"), _b(2973, 0.35, 25), _b(2927, 0.12, 25), _b(2886, 0.10, 25),
        _b(1450, 0.10, 20), _b(1380, 0.08, 15), _b(1328, 0.07, 25), _b(1274, 0.04, 20), _b(1087, 0.35, 20),
        _b(1045, 0.75, 20, 0.5, "C-O stretch, primary alcohol"), _b(880, 0.40, 15),
    ),
    required_bands=(
        _req(OH_BONDED, 3550, 3200, 0.30, min_width=100),
        _req("C-O stretch, primary alcohol", 1065, 1030, 0.50),
    ),
    forbidden_bands=(_forbid("carbonyl (acetaldehyde, ethyl acetate)", 1760, 1690, 0.05),),
)

ETHYL_ACETATE = DemoMaterial(
    code="SOL-203",
    name="Ethyl acetate",
    description="Coating solvent; must be dry. Clear liquid, measured by diamond ATR.",
    preparation="atr-diamond",
    bands=(
        _b(2984, 0.12, 25), _b(2940, 0.05, 20), _b(1737, 0.75, 20, 0.5, "ester C=O"), _b(1446, 0.10, 15),
        _b(1372, 0.30, 12), _b(1235, 0.95, 25, 0.5, "ester C-O stretch"), _b(1097, 0.10, 15), _b(1044, 0.45, 15),
        _b(938, 0.12, 10), _b(847, 0.10, 10), _b(787, 0.06, 10),
    ),
    required_bands=(
        _req("ester C=O stretch", 1760, 1720, 0.50),
        _req("ester C-O stretch", 1260, 1210, 0.50),
    ),
    forbidden_bands=(_forbid("O-H stretch (water or ethanol)", 3550, 3200, 0.05),),
)

GLYCEROL = DemoMaterial(
    code="SOL-204",
    name="Glycerol 85 %",
    description="Humectant and plasticiser; viscous liquid, measured neat between windows (transmission).",
    preparation="neat-liquid",
    bands=(
        _b(3290, 0.55, 300, 0.3, "O-H stretch, H-bonded"), _b(2935, 0.20, 40), _b(2880, 0.13, 40),
        _b(1640, 0.06, 50, 0.5, "water bending"), _b(1415, 0.10, 30), _b(1330, 0.08, 30), _b(1210, 0.07, 25),
        _b(1108, 0.45, 25, 0.5, "C-O stretch, secondary"), _b(1030, 0.80, 25, 0.5, "C-O stretch, primary"),
        _b(993, 0.40, 15), _b(922, 0.24, 15), _b(850, 0.16, 15),
    ),
    required_bands=(
        _req(OH_BONDED, 3550, 3200, 0.12, min_width=100),
        _req("C-O stretch, alcohols", 1060, 1000, 0.50),
    ),
    forbidden_bands=(_forbid(CARBONYL_ANY, 1760, 1690, 0.05),),
)

MATERIALS: tuple[DemoMaterial, ...] = (
    MICROCRYSTALLINE_CELLULOSE, LACTOSE_MONOHYDRATE, MAGNESIUM_STEARATE, POVIDONE,
    ISOPROPANOL, ETHANOL, ETHYL_ACETATE, GLYCEROL,
)
BY_CODE = {m.code: m for m in MATERIALS}

# Polystyrene film (about 35 µm, transmission), for the instrument check. Positions of the Ph. Eur.
# 2.2.24 check bands: 3060.0, 2849.5, 1942.9, 1601.2, 1583.0, 1154.5, 1028.3 cm⁻¹ (domain notes,
# from memory); the other bands are the usual polystyrene bands (from memory). Widths are chosen so
# the resolution checks A(2849.5) − A(2870) > 0.33 and A(1583) − A(1589) > 0.08 pass.
POLYSTYRENE_FILM: tuple[BandShape, ...] = (
    _b(3082.0, 0.45, 9), _b(3060.0, 0.85, 9, 0.5, "Ph. Eur. check band"), _b(3026.0, 1.00, 10), _b(3001.0, 0.35, 8),
    _b(2923.0, 1.30, 20), _b(2849.5, 0.85, 9, 0.5, "Ph. Eur. check band"),
    _b(1942.9, 0.18, 10, 0.5, "Ph. Eur. check band"), _b(1871.0, 0.16, 10), _b(1801.0, 0.14, 12),
    _b(1745.0, 0.08, 14), _b(1601.2, 0.60, 6, 0.5, "Ph. Eur. check band"),
    _b(1583.0, 0.26, 5, 0.5, "Ph. Eur. check band"), _b(1493.0, 1.40, 8), _b(1452.0, 1.30, 10),
    _b(1370.0, 0.08, 10), _b(1328.0, 0.06, 10), _b(1181.0, 0.12, 8), _b(1154.5, 0.22, 6, 0.5, "Ph. Eur. check band"),
    _b(1069.0, 0.30, 8), _b(1028.3, 0.40, 7, 0.5, "Ph. Eur. check band"), _b(965.0, 0.10, 8), _b(906.0, 0.30, 8),
    _b(841.0, 0.10, 10), _b(757.0, 1.40, 10), _b(698.0, 1.45, 12), _b(540.0, 0.50, 14),
)
