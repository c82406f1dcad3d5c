"""Response headers that Django's SecurityMiddleware does not set."""

# Scripts, styles and fonts come only from this site's static files, so no inline script or style
# attribute runs even if a template ever failed to escape something. Charts are SVG files (img-src).
DEFAULT_POLICY = (
    "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; font-src 'self'; "
    "connect-src 'self'; object-src 'none'; base-uri 'none'; frame-ancestors 'none'; form-action 'self'"
)
# Django's admin still sets a few inline style attributes; it gets the same policy with those allowed.
ADMIN_POLICY = DEFAULT_POLICY.replace("style-src 'self'", "style-src 'self' 'unsafe-inline'")
PERMISSIONS_POLICY = "camera=(), microphone=(), geolocation=(), payment=(), usb=()"


class SecurityHeadersMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        response = self.get_response(request)
        policy = ADMIN_POLICY if request.path.startswith("/admin/") else DEFAULT_POLICY
        response.headers.setdefault("Content-Security-Policy", policy)
        response.headers.setdefault("Permissions-Policy", PERMISSIONS_POLICY)
        return response
