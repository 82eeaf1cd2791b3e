"""The API reference at /docs works on a machine without internet: every asset comes from the service itself."""

from __future__ import annotations

from urllib.parse import urlsplit

import pytest

pytestmark = pytest.mark.timeout(120)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect

JOB_OPERATIONS = [
    ("POST", "/api/v1/jobs", "Queue a job"),
    ("GET", "/api/v1/jobs", "List jobs, newest first"),
    ("GET", "/api/v1/jobs/{job_id}", "Read one job"),
    ("POST", "/api/v1/jobs/{job_id}/cancel", "Cancel a queued or running job"),
    ("DELETE", "/api/v1/jobs/{job_id}", "Delete a job and its files"),
]


def test_docs_list_the_job_operations_with_other_hosts_blocked(page, base_url) -> None:
    own = urlsplit(base_url).netloc
    asked: list[str] = []
    blocked: list[str] = []

    def only_our_service(route) -> None:
        url = route.request.url
        asked.append(url)
        if urlsplit(url).netloc == own:
            route.continue_()
        else:
            blocked.append(url)
            route.abort("internetdisconnected")

    page.route("**/*", only_our_service)
    page.goto("/docs")
    for method, path, summary in JOB_OPERATIONS:
        op = (
            page.locator(".opblock")
            .filter(has=page.locator(".opblock-summary-method", has_text=method))
            .filter(has=page.locator(f'.opblock-summary-path[data-path="{path}"]'))
        )
        expect(op).to_have_count(1)
        expect(op.locator(".opblock-summary-description")).to_have_text(summary)
    # an operation opens with its parameters, as a person would use it
    page.locator('.opblock-summary-path[data-path="/api/v1/jobs/{job_id}/cancel"]').click()
    expect(page.locator(".opblock.is-open .parameters-container")).to_contain_text("job_id")
    assert not blocked, f"/docs asked other hosts: {blocked}"
    assert any(u.endswith(".js") for u in asked) and any(u.endswith(".css") for u in asked), asked
