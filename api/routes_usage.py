"""Who the caller is and what they use: disk (against the per-user quota) and active jobs (against the cap), so the
page can show it; admins see every owner's disk use."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter
from starlette.concurrency import run_in_threadpool

from .deps import QuotaDep, SettingsDep, StoreDep, UserDep
from .routes_tokens import AdminDep

router = APIRouter(prefix="/api/v1", tags=["usage"])


@router.get("/me", summary="The caller: name, admin, disk use against the quota, active jobs against the cap")
async def me(user: UserDep, store: StoreDep, settings: SettingsDep, quota: QuotaDep) -> dict[str, Any]:
    used = await run_in_threadpool(quota.used, user.name, True)
    active = await run_in_threadpool(store.active_count, user.name)
    return {
        "name": user.name,
        "admin": user.admin,
        "disk": {
            "used_bytes": used,
            "quota_bytes": settings.user_quota_bytes or None,
            "fields_retention_days": settings.fields_retention_days or None,
        },
        "jobs": {"active": active, "max_active": settings.max_active_per_user},
    }


@router.get("/usage", summary="Disk use of every owner (admins only)")
def usage(store: StoreDep, settings: SettingsDep, _: AdminDep) -> dict[str, Any]:
    return {
        "quota_bytes": settings.user_quota_bytes or None,
        "owners": [{"name": o, "used_bytes": n} for o, n in sorted(store.disk_use_by_owner().items())],
    }
