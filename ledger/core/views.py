from django.shortcuts import render


def csrf_failure(request, reason=""):
    """An expired or missing CSRF token: explain it in words instead of Django's technical page."""
    return render(request, "403_csrf.html", status=403)
