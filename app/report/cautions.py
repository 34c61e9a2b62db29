"""Plain statistical cautions chosen from a Diagnosis (as its dict), for every report view.

Reads finished results only: no linear algebra, no formatting beyond sentences.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

#: VIF above which a column is marked in reports. Common practice (Marquardt,
#: Technometrics 12, 1970, and many texts since), not a law.
VIF_MARK = 10.0


@dataclass(frozen=True)
class Caution:
    """One caution: a stable key (for the web UI and tests), a short title, the sentences."""

    key: str
    title: str
    text: str

    def to_dict(self) -> dict[str, str]:
        return asdict(self)


def high_vif(diagnosis: dict, mark: float = VIF_MARK) -> list[str]:
    """Columns whose VIF is above `mark` or infinite (null), in design order."""
    return [c for c, v in diagnosis.get("vif", {}).items() if v is None or v > mark]


def near_only(diagnosis: dict) -> list[dict]:
    """Flagged near-dependencies that are not exact ones."""
    return [d for d in diagnosis.get("near_dependencies", []) if not d.get("exact")]


def _names(items: list[str], limit: int = 4) -> str:
    shown = ", ".join(items[:limit])
    return shown + (f" and {len(items) - limit} more" if len(items) > limit else "")


def _omitted(diagnosis: dict) -> Caution | None:
    exact = bool(diagnosis.get("dependencies"))
    near = bool(near_only(diagnosis)) or any(
        v is not None and v > VIF_MARK for v in diagnosis.get("vif", {}).values())
    if not (exact or near):
        return None
    text = (
        "Dropping a column to cure a dependency changes what every remaining coefficient "
        "means: each one then also carries the part of the dropped column it can stand in for. "
    )
    if exact:
        text += (
            "For an exact dependency nothing is lost in fit, but the survivors' coefficients "
            "now answer a different question. "
        )
    text += (
        "When the dropped column really moves the response and is correlated with the ones "
        "kept, their estimates are biased (omitted-variable bias). Drop a column because the "
        "question does not need it, not only because the numbers look better."
    )
    return Caution("omitted_variable", "Dropping a column changes the others", text)


def _sample(diagnosis: dict) -> Caution | None:
    near = [c for d in near_only(diagnosis) for c in d["columns"]]
    vif = [c for c, v in diagnosis.get("vif", {}).items() if v is not None and v > VIF_MARK]
    cols = list(dict.fromkeys(near + vif))
    if not cols:
        return None
    return Caution(
        "sample_property",
        "Collinearity belongs to this sample",
        f"The near-dependencies involving {_names(cols)} are a property of these rows, not a "
        "law of the population: rows in which these columns move apart (new conditions, or a "
        "designed experiment) would separate their effects. Collecting such rows helps more "
        "than any change of method.",
    )


def _causal(diagnosis: dict) -> Caution | None:
    if not diagnosis.get("fit"):
        return None
    return Caution(
        "not_causal",
        "A coefficient is not a causal effect",
        "Each coefficient describes how the fitted response differs between rows that differ "
        "in that column while the other columns are held equal. It is an effect of the column "
        "only if nothing left out of the model drives both, and that cannot be read off "
        "this table.",
    )


def _aliasing(diagnosis: dict) -> Caution | None:
    fit = diagnosis.get("fit") or {}
    aliased = fit.get("aliased") or []
    if not aliased:
        return None
    structure = fit.get("alias_structure") or []
    own = "has no estimate of its own" if len(aliased) == 1 else "have no estimates of their own"
    example = ""
    if structure:
        first = structure[0]
        example = f" For example, the estimate for {first['column']} estimates {first['text']}."
    return Caution(
        "aliasing",
        "Aliased columns: coefficients estimate combinations",
        f"{_names(aliased)} {own}: "
        "the fit keeps a basis of columns and sets the aliased ones to zero. Each basis "
        "coefficient then estimates a combination of true coefficients (the fit's "
        f"alias_structure lists them).{example} The data cannot split such a combination; "
        "choosing another basis (--keep) moves the combination, it does not resolve it.",
    )


def _thresholds(diagnosis: dict) -> Caution | None:
    index_mark = diagnosis.get("thresholds", {}).get("condition_index", 30.0)
    marked_vif = any(v is not None and v > VIF_MARK for v in diagnosis.get("vif", {}).values())
    if not (marked_vif or near_only(diagnosis)):
        return None
    return Caution(
        "thresholds",
        "Marks are common practice, not laws",
        f"The marks at VIF {VIF_MARK:g} and condition index {index_mark:g} are common "
        "practice. Whether a given inflation matters depends on the standard errors you "
        "can live with: a VIF of 20 is harmless when the interval is still narrow enough, "
        "and a VIF of 5 can hurt in a small sample.",
    )


RULES = (_omitted, _sample, _causal, _aliasing, _thresholds)


def choose_cautions(diagnosis: dict) -> list[Caution]:
    """The cautions that apply to this diagnosis, in reading order."""
    out = []
    for rule in RULES:
        c = rule(diagnosis)
        if c is not None:
            out.append(c)
    return out
