"""`/healthz`: liveness only; it touches no database so it stays cheap under load."""

from functools import cache
from importlib.metadata import PackageNotFoundError, version

from fastapi import APIRouter

from api.schemas import Health

router = APIRouter(tags=["service"])


@cache  # reading distribution metadata scans sys.path: far too slow for every health check
def _version() -> str:
    try:
        return version("rigbench")
    except PackageNotFoundError:  # running from a source tree that was never installed
        return "0+unknown"


@router.get("/healthz", response_model=Health, operation_id="health", summary="Is the process alive?")
async def health() -> Health:
    return Health(version=_version())
