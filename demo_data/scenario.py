"""The invented scenario: one contract manufacturer, its suppliers, instruments and incoming lots.

Every name here is invented for the demo (no real company is meant). Each lot is set up to walk one
path of the identity test, and says which verdict each of its measurements should get.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from demo_data.synth import Acquisition, BandShape

COMPANY = "Quenby Moss Contract Manufacturing (invented)"
SITE = "Quenby Moss plant, goods-in QC laboratory (invented)"


@dataclass(frozen=True, kw_only=True)
class DemoSupplier:
    code: str
    name: str
    materials: tuple[str, ...]
    reduced_sampling: tuple[str, ...] = ()  # materials for which a reduced sampling plan is validated


SUPPLIERS: tuple[DemoSupplier, ...] = (
    DemoSupplier(code="SUP-ARD", name="Ardlowe Excipients (invented)", materials=("EXC-101", "EXC-102", "EXC-104")),
    DemoSupplier(code="SUP-PEL", name="Pellingham Fine Chemicals (invented)", materials=("EXC-103", "SOL-204")),
    DemoSupplier(code="SUP-KES", name="Keswold Solvents (invented)", materials=("SOL-201", "SOL-202", "SOL-203")),
    DemoSupplier(code="SUP-BRF", name="Brackenfold Trading (invented)", materials=("SOL-201",)),
)


@dataclass(frozen=True, kw_only=True)
class DemoInstrument:
    code: str
    kind: str
    location: str
    check_age_days: float  # 0: checked today; > 0: its check is meant to be out of date (see service/services/demo.py)


INSTRUMENTS: tuple[DemoInstrument, ...] = (
    DemoInstrument(code="FTIR-01", kind="FT-IR spectrometer, diamond ATR and liquid cell",
                   location="QC laboratory, bench 2", check_age_days=0.0),
    DemoInstrument(code="FTIR-02", kind="FT-IR spectrometer, diamond ATR",
                   location="Goods-in sampling booth", check_age_days=3.0),
)


@dataclass(frozen=True, kw_only=True)
class DemoMeasurement:
    file_stem: str                 # samples/<file_stem>.jdx and csv/samples/<file_stem>.csv
    container: int
    content: str                   # material code of what is really in the container
    expect: str                    # verdict the evaluator should give: pass | fail | invalid
    acquisition: Acquisition = Acquisition()
    extra_bands: tuple[BandShape, ...] = ()
    why: str = ""


@dataclass(frozen=True, kw_only=True)
class DemoLot:
    key: str                       # scenario name, stable for tests
    material: str
    supplier: str
    supplier_lot: str
    containers: int
    instrument: str
    measurements: tuple[DemoMeasurement, ...]
    outcome: str                   # what the seeding does after the measurements (see README)
    story: str
    expect_refused: bool = False   # the measurement is refused (instrument not qualified)
    notes: tuple[str, ...] = field(default_factory=tuple)


def _band(position: float, height: float, fwhm: float, eta: float = 0.5, note: str = "") -> BandShape:
    return BandShape(position=position, height=height, fwhm=fwhm, eta=eta, note=note)


WATER_IN_SOLVENT = (_band(3450, 0.15, 330, 0.3, "O-H of dissolved water"), _band(1640, 0.03, 50, 0.5, "water bending"))
STEARIC_ACID_CARBONYL = (_band(1702, 0.20, 22, 0.5, "carboxylic acid C=O of free stearic acid"),)
VINYL_ACETATE_ESTER = (_band(1735, 0.30, 22, 0.5, "ester C=O of a vinyl acetate copolymer"),
                       _band(1240, 0.18, 25, 0.5, "ester C-O"))

LOTS: tuple[DemoLot, ...] = (
    DemoLot(
        key="clean-pass", material="EXC-101", supplier="SUP-ARD", supplier_lot="ARD-MC-24817", containers=2,
        instrument="FTIR-01", outcome="await-disposition",
        story="Both containers conform; the lot waits for the quality unit's disposition.",
        measurements=(
            DemoMeasurement(file_stem="EXC-101_lot-ARD-MC-24817_c1", container=1, content="EXC-101", expect="pass",
                            acquisition=Acquisition(scale=0.92, offset=0.012, slope=0.015)),
            DemoMeasurement(file_stem="EXC-101_lot-ARD-MC-24817_c2", container=2, content="EXC-101", expect="pass",
                            acquisition=Acquisition(scale=1.06, offset=0.008, slope=0.02)),
        ),
    ),
    DemoLot(
        key="wet", material="SOL-203", supplier="SUP-KES", supplier_lot="KES-EA-0931", containers=1,
        instrument="FTIR-01", outcome="await-review",
        story="The drum took up water: a broad O-H band where dry ethyl acetate must show none.",
        measurements=(
            DemoMeasurement(file_stem="SOL-203_lot-KES-EA-0931_c1_wet", container=1, content="SOL-203", expect="fail",
                            extra_bands=WATER_IN_SOLVENT, why="forbidden O-H band (water)"),
        ),
    ),
    DemoLot(
        key="mix-up", material="SOL-201", supplier="SUP-BRF", supplier_lot="BRF-2611-IP", containers=2,
        instrument="FTIR-01", outcome="await-review",
        story="Container 2 of an isopropanol delivery holds ethanol: its fingerprint fails and the "
              "mix-up check names ethanol. Container 1 is isopropanol, which is why every container is tested.",
        measurements=(
            DemoMeasurement(file_stem="SOL-201_lot-BRF-2611-IP_c1", container=1, content="SOL-201", expect="pass"),
            DemoMeasurement(file_stem="SOL-201_lot-BRF-2611-IP_c2_holds-ethanol", container=2, content="SOL-202",
                            expect="fail", why="fingerprint fails; best match SOL-202 ethanol"),
        ),
    ),
    DemoLot(
        key="contaminated", material="EXC-103", supplier="SUP-PEL", supplier_lot="PEL-MGS-5520", containers=1,
        instrument="FTIR-01", outcome="await-review",
        story="Free stearic acid shows as an extra carbonyl band near 1702 cm-1; the fingerprint alone would pass.",
        measurements=(
            DemoMeasurement(file_stem="EXC-103_lot-PEL-MGS-5520_c1_carbonyl", container=1, content="EXC-103",
                            expect="fail", extra_bands=STEARIC_ACID_CARBONYL, why="forbidden carbonyl band"),
        ),
    ),
    DemoLot(
        key="invalid", material="SOL-204", supplier="SUP-PEL", supplier_lot="PEL-GLY-1187", containers=1,
        instrument="FTIR-01", outcome="measure-again",
        story="The liquid film was far too thick: bands saturate, so the measurement cannot be judged and must "
              "be repeated (samples/SOL-204_lot-PEL-GLY-1187_c1_remeasured.jdx is the repeat to upload).",
        measurements=(
            DemoMeasurement(file_stem="SOL-204_lot-PEL-GLY-1187_c1_too-thick", container=1, content="SOL-204",
                            expect="invalid", acquisition=Acquisition(scale=5.0, stray_light=0.005, noise_sd=0.0016),
                            why="saturated bands"),
        ),
        notes=("SOL-204_lot-PEL-GLY-1187_c1_remeasured",),
    ),
    DemoLot(
        key="instrument-lapsed", material="EXC-104", supplier="SUP-ARD", supplier_lot="ARD-PV-7702", containers=1,
        instrument="FTIR-02", outcome="refused", expect_refused=True,
        story="FTIR-02's polystyrene check passed but its film was measured three days ago, so it has lapsed "
              "(period 1 day): the upload is kept but refused until the instrument passes a check again.",
        measurements=(
            DemoMeasurement(file_stem="EXC-104_lot-ARD-PV-7702_c1", container=1, content="EXC-104", expect="pass"),
        ),
    ),
    DemoLot(
        key="rejected", material="EXC-104", supplier="SUP-ARD", supplier_lot="ARD-PV-7655", containers=1,
        instrument="FTIR-01", outcome="reject",
        story="The povidone drum held a vinyl acetate copolymer (ester carbonyl band). Reviewed by the "
              "supervisor and rejected by QA, both signed.",
        measurements=(
            DemoMeasurement(file_stem="EXC-104_lot-ARD-PV-7655_c1_ester", container=1, content="EXC-104",
                            expect="fail", extra_bands=VINYL_ACETATE_ESTER, why="forbidden ester carbonyl band"),
        ),
    ),
    DemoLot(
        key="released", material="EXC-102", supplier="SUP-ARD", supplier_lot="ARD-LM-31170", containers=2,
        instrument="FTIR-01", outcome="release",
        story="Both containers conform; QA released the lot with a signature.",
        measurements=(
            DemoMeasurement(file_stem="EXC-102_lot-ARD-LM-31170_c1", container=1, content="EXC-102", expect="pass",
                            acquisition=Acquisition(scale=1.1)),
            DemoMeasurement(file_stem="EXC-102_lot-ARD-LM-31170_c2", container=2, content="EXC-102", expect="pass",
                            acquisition=Acquisition(scale=0.95, slope=0.02)),
        ),
    ),
)

# Extra sample files that no seeded lot uses (for the guided tour and by-hand uploads).
REMEASURED_GLYCEROL = DemoMeasurement(file_stem="SOL-204_lot-PEL-GLY-1187_c1_remeasured", container=1,
                                      content="SOL-204", expect="pass")
