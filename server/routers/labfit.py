"""POST /api/v1/lab-fit: cake and cloth resistance from lab filtration tests."""

from fastapi import APIRouter, Request, UploadFile

from ..budget import within_budget
from ..errors import InputError
from ..lab import compression_request, fit_request
from ..labdata import CsvError, parse_readings
from ..schemas.common import ERROR_RESPONSES
from ..schemas.labfit import CompressionFitRequest, CompressionFitResponse, LabFitRequest, LabFitResponse
from ..uploads import read_upload

router = APIRouter(prefix="/api/v1", tags=["lab-fit"], responses=ERROR_RESPONSES)
MAX_CSV_BYTES = 1_000_000


@router.post("/lab-fit", response_model=LabFitResponse)
async def post_lab_fit(request: Request, lab_request: LabFitRequest) -> dict:
    """Fit t/V against V for each test; alpha_ref and s over several pressures.

    Quantities accept unit strings ("440 cm^2", "23.5 g/L", "6.7 psi", "250 mL").
    """
    return await within_budget(request, fit_request, lab_request)


@router.post("/compression-fit", response_model=CompressionFitResponse)
async def post_compression_fit(request: Request, compression: CompressionFitRequest) -> dict:
    """Tiller and Leu's local laws from a compression-permeability table; ``for_cycle`` is the
    ``cake`` of an /api/v1/cycle request (``cake.local``)."""
    return await within_budget(request, compression_request, compression)


@router.post("/lab-readings", openapi_extra={"requestBody": {"content": {
    "text/csv": {"schema": {"type": "string", "description": (
        f"A header naming the columns and units, e.g. time [min], filtrate [mL]; at most {MAX_CSV_BYTES:,} "
        f"bytes (413 above)")}},
    "multipart/form-data": {"schema": {"type": "object", "required": ["file"],
                                       "properties": {"file": {"type": "string", "format": "binary"}}}},
}}})
async def post_lab_readings(request: Request, file: UploadFile | None = None) -> dict:
    """Read (t, V) readings from an uploaded CSV file or a text/csv body; returns SI points.

    The header names the columns and their units, e.g. ``time [min], filtrate [mL]``.
    """
    raw = await read_upload(request, file, MAX_CSV_BYTES)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError([(("body",), "the file is not UTF-8 text")]) from None
    try:
        r = parse_readings(text)
    except CsvError as exc:
        raise InputError([(("body",), str(exc))]) from None
    return {"points": [list(p) for p in r.points], "time_unit": r.time_unit, "volume_unit": r.volume_unit,
            "separator": r.separator, "decimal": r.decimal, "ignored_columns": r.ignored_columns,
            "units": {"points": "[s, m^3]"}}
