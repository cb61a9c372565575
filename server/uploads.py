"""Reading an upload: the multipart part named "file", or the whole body."""

from fastapi import Request
from starlette.exceptions import HTTPException as StarletteHTTPException

from .errors import InputError


async def read_upload(request: Request, file, max_bytes: int) -> bytes:
    """The bytes of an upload: the multipart part named "file", or the whole body.

    A multipart body without a "file" part is a 422 that says so; more than ``max_bytes``
    is a 413.
    """
    if file is None and request.headers.get("content-type", "").startswith("multipart/"):
        raise InputError([(("body", "file"), "send the file in a form part named \"file\"")])
    raw = await (file.read(max_bytes + 1) if file is not None else request.body())
    if len(raw) > max_bytes:
        raise StarletteHTTPException(413, f"the upload is larger than {max_bytes // 1000} kB")
    return raw
