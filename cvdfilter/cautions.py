"""The caveat and cautions every report carries.

Kept in one place so that the CLI, the JSON/CSV outputs, the figures and the
HTML report say exactly the same thing.
"""

from __future__ import annotations

__all__ = ["CAVEAT", "ROAD_CAUTION", "EYE_CARE_CAUTION"]

CAVEAT = (
    "Model predictions from published cone fundamentals and simulation models; "
    "not clinical evidence, not a diagnosis, and no statement about any particular "
    "person's vision."
)

ROAD_CAUTION = (
    "Road use and signal lights: follow ISO 12312-1 (its own tables govern), local "
    "traffic rules and the advice of a licensed eye-care practitioner. No filter "
    "restores normal colour vision, and none is suitable for colour-vision tests "
    "required by an occupation."
)

EYE_CARE_CAUTION = (
    "Questions about a person's eyes or colour vision belong with a licensed "
    "eye-care practitioner."
)
