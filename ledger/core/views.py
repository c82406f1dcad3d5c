from django.middleware.csrf import REASON_BAD_ORIGIN
from django.shortcuts import render


def csrf_failure(request, reason=""):
    """Explain a refused form in words instead of Django's technical page.

    A page served under an address the site does not trust (a proxy or host name missing from
    CSRF_TRUSTED_ORIGINS) needs the administrator; an expired token needs only a reload.
    """
    wrong_origin = reason.startswith(REASON_BAD_ORIGIN.split("%")[0])
    return render(request, "403_csrf.html", {"wrong_origin": wrong_origin}, status=403)
