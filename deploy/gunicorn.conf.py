"""Gunicorn settings for Forebook in production: ``gunicorn --config deploy/gunicorn.conf.py ledger.wsgi``.

Every value an operator may want to change comes from the environment (``/etc/forebook/forebook.env``,
see ``forebook.env.example``), so upgrading the checkout never overwrites a site's choices. Gunicorn
reads only the module-level names it knows, so the helpers below are invisible to it.
"""
import os

DEFAULT_TIMEOUT_SECONDS = 120
# forebook-web.service's RuntimeDirectory= (a tmpfs, emptied when the service stops); systemd
# names it in RUNTIME_DIRECTORY.
RUNTIME_DIR = os.environ.get("RUNTIME_DIRECTORY", "").strip() or "/run/forebook"


def _positive_int_from_env(*, name: str, default: int) -> int:
    raw = os.environ.get(name, "").strip()
    if not raw:
        return default
    try:
        value = int(raw)
    except ValueError:
        value = 0
    if value < 1:
        raise ValueError(f"{name} must be a whole number of at least 1; got {raw!r}. Fix or remove it.")
    return value


def _default_worker_count() -> int:
    # The CPUs this process may run on, not the machine's total: a unit with CPUAffinity= or a
    # container with a CPU set would otherwise start far more workers than it can run.
    usable_cpus = len(os.sched_getaffinity(0))
    # (2 x cores) + 1 is gunicorn's starting point (gunicorn docs, design.rst, "How Many
    # Workers?"): per core, one worker handles a request while another reads or writes its socket.
    return 2 * usable_cpus + 1


wsgi_app = "ledger.wsgi:application"

# A unix socket by default: only the nginx on this host (in the `forebook` group, see README)
# can reach it. Gunicorn trusts X-Forwarded-* from any unix-socket peer, so the socket's
# directory permissions are the access control. Set e.g. 127.0.0.1:8001 to listen on TCP.
bind = [os.environ.get("FOREBOOK_WEB_BIND", "").strip() or f"unix:{RUNTIME_DIR}/gunicorn.sock"]

# Sync workers: nginx buffers whole requests and responses, so a slow client never holds one.
workers = _positive_int_from_env(name="FOREBOOK_WEB_WORKERS", default=_default_worker_count())
worker_class = "sync"

# The slowest requests do PDF work in the web worker: checking an uploaded record's signatures
# and proofs, and (only where no broker is set, tasks then run in-process) rendering and signing
# an export. The timeout must cover them. nginx's proxy_read_timeout (nginx/forebook.conf) is a
# little longer, so gunicorn ends a stuck request first rather than nginx giving up on a worker
# that keeps running.
timeout = _positive_int_from_env(name="FOREBOOK_WEB_TIMEOUT", default=DEFAULT_TIMEOUT_SECONDS)
graceful_timeout = 30
keepalive = 5

# Recycling workers bounds slow memory growth from PDF rendering and plotting libraries;
# the jitter keeps all workers from restarting at the same moment (common practice, no source).
max_requests = 1000
max_requests_jitter = 100

# No preload: each worker imports the app itself, so `systemctl reload forebook-web` (HUP)
# starts workers on the new code after an upgrade without dropping the listening socket.
preload_app = False

# The heartbeat files live on tmpfs; on a disk-backed /tmp their fchmod can stall a worker.
worker_tmp_dir = RUNTIME_DIR

# Only the nginx in front may say "this request came over HTTPS". nginx overwrites
# X-Forwarded-Proto on every request but passes other headers through, so the other scheme
# headers gunicorn knows by default (X-Forwarded-Ssl, X-Forwarded-Protocol) are not trusted.
forwarded_allow_ips = os.environ.get("FOREBOOK_FORWARDED_ALLOW_IPS", "").strip() or "127.0.0.1,::1"
secure_scheme_headers = {"X-FORWARDED-PROTO": "https"}

# Logs go to stderr, hence to the journal; the access line ends with the request time in seconds
# (%(L)s) so that slow exports stand out. %(h)s is nginx, so the client address is taken from the
# X-Forwarded-For header that nginx sets.
accesslog = "-"
errorlog = "-"
loglevel = os.environ.get("LOG_LEVEL", "info").lower()
access_log_format = '%({x-forwarded-for}i)s "%(r)s" %(s)s %(B)s "%(f)s" "%(a)s" %(L)ss'

# Gunicorn 25.1 and later open a control socket, by default under $HOME, which the unit keeps
# read-only. Put it beside the listening socket, readable by the service user only. Earlier
# versions do not know these names and ignore them.
control_socket = f"{RUNTIME_DIR}/gunicorn.ctl"
control_socket_mode = 0o600

proc_name = "forebook-web"
