"""Settings shared by every environment; every value an operator may change comes from the environment.

Defaults give the embedded set-up: a SQLite file in the project, Celery tasks run eagerly in the web
process, e-mail printed to the console. ``ledger.settings.production`` tightens this for a real
deployment; ``ledger.settings.test`` for the test suite.
"""
import os
from pathlib import Path

import dj_database_url
from django.core.exceptions import ImproperlyConfigured

BASE_DIR = Path(__file__).resolve().parent.parent.parent


def env_bool(name: str, default: bool) -> bool:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    lowered = raw.strip().lower()
    if lowered in {"1", "true", "yes", "on"}:
        return True
    if lowered in {"0", "false", "no", "off"}:
        return False
    raise ImproperlyConfigured(f"{name} must be true or false (1/0, yes/no, on/off); got {raw!r}.")


def env_list(name: str, default: list[str]) -> list[str]:
    raw = os.environ.get(name)
    if raw is None:
        return default
    return [item.strip() for item in raw.split(",") if item.strip()]


def env_int(name: str, default: int) -> int:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    try:
        return int(raw)
    except ValueError:
        raise ImproperlyConfigured(f"{name} must be a whole number; got {raw!r}.") from None


# Files Forebook writes at run time (generated records, the signing identity, collected static
# files) live outside the checkout so that a `git clean` or a redeploy never loses them.
DATA_DIR = Path(
    os.environ.get("FOREBOOK_DATA_DIR")
    or Path(os.environ.get("XDG_DATA_HOME") or Path.home() / ".local" / "share") / "forebook"
)

DEBUG = env_bool("DEBUG", True)
# Development only: production.py refuses to start without a real SECRET_KEY.
SECRET_KEY = os.environ.get("SECRET_KEY") or "dev-only-insecure-key-never-use-in-production-0123456789abcdef"
ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", ["127.0.0.1", "localhost", "[::1]"])
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", [])

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "whitenoise.runserver_nostatic",
    "django.contrib.staticfiles",
    "ledger.core",
    "ledger.labs",
    "ledger.chain",
    "ledger.plans",
    "ledger.results",
    "ledger.lines",
    "ledger.records",
    "ledger.reports",
    "rest_framework",
    "drf_spectacular",
    "drf_spectacular_sidecar",
    "ledger.api",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "ledger.core.middleware.SecurityHeadersMiddleware",
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
]

ROOT_URLCONF = "ledger.urls"
WSGI_APPLICATION = "ledger.wsgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [BASE_DIR / "templates"],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                "ledger.labs.context_processors.current_membership",
            ],
        },
    },
]


def database_from_env(default_url: str) -> dict:
    config = dj_database_url.parse(os.environ.get("DATABASE_URL") or default_url, conn_max_age=0)
    if config["ENGINE"] == "django.db.backends.sqlite3":
        # IMMEDIATE takes the write lock when a transaction starts, so two writers queue
        # instead of failing with "database is locked" halfway through an append.
        config["OPTIONS"] = {"transaction_mode": "IMMEDIATE", "timeout": 30}
    else:
        config["CONN_MAX_AGE"] = env_int("CONN_MAX_AGE", 60)
        config["CONN_HEALTH_CHECKS"] = True
    return config


DATABASES = {"default": database_from_env(f"sqlite:///{BASE_DIR / 'db.sqlite3'}")}


def cache_from_env() -> dict:
    """CACHE_URL names a Redis server (redis://, rediss:// or unix://); empty means a cache per process.

    The API's rate limits count in this cache: with several web processes, only a shared cache
    (Redis) makes the limit hold across them.
    """
    url = os.environ.get("CACHE_URL", "").strip()
    if not url:
        return {"default": {"BACKEND": "django.core.cache.backends.locmem.LocMemCache", "LOCATION": "forebook"}}
    if not url.startswith(("redis://", "rediss://", "unix://")):
        raise ImproperlyConfigured(
            f"CACHE_URL must be a Redis URL such as redis://127.0.0.1:6379/1, or empty for a per-process cache; "
            f"got {url!r}."
        )
    return {"default": {"BACKEND": "django.core.cache.backends.redis.RedisCache", "LOCATION": url}}


CACHES = cache_from_env()
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator", "OPTIONS": {"min_length": 12}},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "home"
LOGOUT_REDIRECT_URL = "login"

LANGUAGE_CODE = "en"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATICFILES_DIRS = [BASE_DIR / "static"]
# collectstatic's target; in development the files are served from STATICFILES_DIRS instead.
STATIC_ROOT = None if DEBUG else DATA_DIR / "static"
WHITENOISE_USE_FINDERS = DEBUG
MEDIA_ROOT = DATA_DIR / "media"
MEDIA_URL = "media/"
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"},
}
if DEBUG:
    STORAGES["staticfiles"] = {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"}

# Celery: with no broker configured, run tasks in-process so the quick-start needs no services.
CELERY_BROKER_URL = os.environ.get("CELERY_BROKER_URL", "")
CELERY_TASK_ALWAYS_EAGER = not CELERY_BROKER_URL
CELERY_TASK_EAGER_PROPAGATES = True
CELERY_RESULT_BACKEND = None
CELERY_TASK_ACKS_LATE = True
CELERY_TASK_REJECT_ON_WORKER_LOST = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_TASK_TIME_LIMIT = 600
CELERY_BROKER_CONNECTION_RETRY_ON_STARTUP = True

EMAIL_BACKEND = os.environ.get("EMAIL_BACKEND", "django.core.mail.backends.console.EmailBackend")
EMAIL_HOST = os.environ.get("EMAIL_HOST", "localhost")
EMAIL_PORT = env_int("EMAIL_PORT", 25)
EMAIL_HOST_USER = os.environ.get("EMAIL_HOST_USER", "")
EMAIL_HOST_PASSWORD = os.environ.get("EMAIL_HOST_PASSWORD", "")
EMAIL_USE_TLS = env_bool("EMAIL_USE_TLS", False)
DEFAULT_FROM_EMAIL = os.environ.get("DEFAULT_FROM_EMAIL", "forebook@localhost")

SESSION_COOKIE_HTTPONLY = True
SESSION_COOKIE_SAMESITE = "Lax"
CSRF_COOKIE_SAMESITE = "Lax"
X_FRAME_OPTIONS = "DENY"
SECURE_REFERRER_POLICY = "same-origin"
SECURE_CONTENT_TYPE_NOSNIFF = True

# Forebook's own settings.
FOREBOOK_SITE_NAME = os.environ.get("FOREBOOK_SITE_NAME", "Forebook")
# The address people open the site at, for links in e-mails sent by background jobs (which have no request).
FOREBOOK_BASE_URL = os.environ.get("FOREBOOK_BASE_URL", "http://127.0.0.1:8000")

# Signed checkpoints and signed records (ledger.chain.checkpoints, ledger.records). Key and
# certificate paths left empty mean the files in FOREBOOK_IDENTITY_DIR that
# `python manage.py create_signing_identity` makes (a self-signed development identity).
FOREBOOK_IDENTITY_DIR = Path(os.environ.get("FOREBOOK_IDENTITY_DIR") or DATA_DIR / "identity")
FOREBOOK_SIGNING_KEY = os.environ.get("FOREBOOK_SIGNING_KEY", "")
FOREBOOK_SIGNING_CERT = os.environ.get("FOREBOOK_SIGNING_CERT", "")
FOREBOOK_SIGNING_KEY_PASSPHRASE = os.environ.get("FOREBOOK_SIGNING_KEY_PASSPHRASE", "")
FOREBOOK_LOG_KEY = os.environ.get("FOREBOOK_LOG_KEY", "")
# The name of a new log key and of the checkpoints it signs: a schema-less URL, e.g. lab.example.org/forebook-log.
FOREBOOK_LOG_ORIGIN = os.environ.get("FOREBOOK_LOG_ORIGIN", "")
# An RFC 3161 timestamp authority; set, record signatures are PAdES B-T instead of B-B.
FOREBOOK_TSA_URL = os.environ.get("FOREBOOK_TSA_URL", "")
FOREBOOK_CHECKPOINT_INTERVAL_SECONDS = env_int("FOREBOOK_CHECKPOINT_INTERVAL_SECONDS", 3600)
FOREBOOK_RECORDS_DIR = Path(os.environ.get("FOREBOOK_RECORDS_DIR") or DATA_DIR / "records")
FOREBOOK_RECORD_EXPIRY_HOURS = env_int("FOREBOOK_RECORD_EXPIRY_HOURS", 168)
FOREBOOK_RECORD_UPLOAD_MAX_BYTES = env_int("FOREBOOK_RECORD_UPLOAD_MAX_BYTES", 20 * 1024 * 1024)

# Every periodic job, in one place (run `celery -A ledger beat` beside the worker).
CELERY_BEAT_SCHEDULE = {
    "sign-checkpoint-when-new-entries": {
        "task": "ledger.chain.tasks.checkpoint_sign_due",
        "schedule": FOREBOOK_CHECKPOINT_INTERVAL_SECONDS,
    },
    "purge-expired-record-files": {
        "task": "ledger.records.tasks.record_exports_purge",
        "schedule": 3600,
    },
    "purge-expired-report-files": {
        "task": "ledger.reports.tasks.report_exports_purge",
        "schedule": 3600,
    },
    "notify-overdue-results-daily": {
        "task": "ledger.reports.tasks.overdue_scan",
        "schedule": 24 * 3600,
    },
}

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "formatters": {"plain": {"format": "%(asctime)s %(levelname)s %(name)s %(message)s"}},
    "handlers": {"console": {"class": "logging.StreamHandler", "formatter": "plain"}},
    "root": {"handlers": ["console"], "level": os.environ.get("LOG_LEVEL", "INFO")},
    # WeasyPrint and fontTools report every layout step at INFO; only their problems matter here.
    "loggers": {
        "django.db.backends": {"level": "WARNING"},
        "weasyprint": {"level": "WARNING"},
        "fontTools": {"level": "WARNING"},
    },
}
CSRF_FAILURE_VIEW = "ledger.core.views.csrf_failure"

# The JSON API for analysis scripts (ledger.api): personal API tokens only, no session, so no CSRF.
REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": ["ledger.api.authentication.ApiTokenAuthentication"],
    "DEFAULT_PERMISSION_CLASSES": ["ledger.api.authentication.HasApiToken"],
    "DEFAULT_PARSER_CLASSES": ["ledger.api.parsers.ExactNumberJSONParser"],
    "DEFAULT_RENDERER_CLASSES": ["rest_framework.renderers.JSONRenderer"],
    "DEFAULT_SCHEMA_CLASS": "drf_spectacular.openapi.AutoSchema",
    "EXCEPTION_HANDLER": "ledger.api.errors.api_exception_handler",
}
SPECTACULAR_SETTINGS = {
    "TITLE": "Forebook API",
    "DESCRIPTION": (
        "Record results from analysis scripts and read a lab's studies, sealed plans and ledger entries. "
        "Authenticate with a personal API token (Authorization: Bearer fb_...), created on the API tokens page "
        "of your lab. The public mirror of the ledger needs no token."
    ),
    "VERSION": "1",
    "SCHEMA_PATH_PREFIX": r"/api/v1",
    "SERVE_INCLUDE_SCHEMA": False,
    "SERVE_PUBLIC": True,
    "SERVE_AUTHENTICATION": [],
    "SERVE_PERMISSIONS": ["rest_framework.permissions.AllowAny"],
    # Swagger UI's files come from the drf-spectacular-sidecar package, served as our own static files:
    # no CDN, so the page works under a Content-Security-Policy of 'self'.
    "SWAGGER_UI_DIST": "SIDECAR",
    "SWAGGER_UI_FAVICON_HREF": "SIDECAR",
    "REDOC_DIST": "SIDECAR",
}
# Rates per API token ("N/second|minute|hour|day"); the public mirror's rate counts per client address.
FOREBOOK_API_SUBMISSION_RATE = os.environ.get("FOREBOOK_API_SUBMISSION_RATE", "30/minute")
FOREBOOK_API_READ_RATE = os.environ.get("FOREBOOK_API_READ_RATE", "600/minute")
FOREBOOK_API_PUBLIC_RATE = os.environ.get("FOREBOOK_API_PUBLIC_RATE", "300/minute")
