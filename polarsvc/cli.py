"""The ``polarsvc`` command line: a thin layer over the store, the service and the client.

Exit codes: 0 success, 1 some input refused (named on standard error), 2 usage error,
3 the server cannot listen where asked (port in use, unknown host), 4 the database's schema
revision is unknown to this software (:data:`EXIT_SCHEMA_MISMATCH`).

Local commands (import, export, db, token, review, audit, lineage, verify, bundle,
performance, compare) work on the database named by ``--database-url`` or
``POLARSVC_DATABASE_URL``; else on the database the last ``polarsvc serve`` in this folder
served (recorded in ``./polarsvc-data/serving.json``, see :mod:`polarsvc.serving`), so that
the tools and the demo server share one database; else on the SQLite file
``./polarsvc-data/polarsvc.db``.
``fetch`` talks to a running server (``--server``, ``POLARSVC_SERVER``, else the recorded
address, else ``http://127.0.0.1:8000``).
"""

from __future__ import annotations

import argparse
import datetime as dt
import getpass
import ipaddress
import json
import os
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from polarsvc import __version__

SEED_DIRS = (Path(__file__).resolve().parent.parent / "seed_polars", Path.cwd() / "seed_polars")
"""Where the demo data are looked for: beside the package (a checkout), or here."""
DEMO_DATABASE = Path("polarsvc-data") / "demo.db"
DEFAULT_SERVER = "http://127.0.0.1:8000"
EXIT_CANNOT_SERVE = 3
WORKERS_ENV = "POLARSVC_WORKERS"
"""Environment setting of the number of server processes (``serve --workers`` wins)."""


EXIT_SCHEMA_MISMATCH = 4
"""Exit code when the database carries a schema revision this software does not know."""


def _stderr(message: str) -> None:
    print(message, file=sys.stderr, flush=True)


def _database_url(args: argparse.Namespace) -> str:
    """The database of a local command (see the module docstring for the order)."""
    from polarsvc.serving import SERVING_RECORD, read_serving_record
    from polarsvc.store.db import default_database_url

    explicit = args.database_url or os.environ.get("POLARSVC_DATABASE_URL")
    if explicit:
        return explicit
    record = read_serving_record()
    if record is not None and record.database_url is not None:
        if not getattr(args, "_database_noted", False):
            _stderr(f"database: {record.database_url} (the one `polarsvc serve` uses here, "
                    f"recorded in {SERVING_RECORD}; --database-url names another)")
            args._database_noted = True
        return record.database_url
    return default_database_url()


def _server_address(args: argparse.Namespace) -> str:
    """The server of ``fetch``: --server, POLARSVC_SERVER, the recorded address, default."""
    from polarsvc.serving import read_serving_record

    if args.server:
        return args.server
    record = read_serving_record()
    return (record.address if record is not None and record.address else None) or DEFAULT_SERVER


def _local_actor():
    from polarsvc.store.audit import Actor

    try:
        user = getpass.getuser()
    except (KeyError, OSError):
        user = "unknown"
    return Actor(name=f"cli:{user}", role="admin", remote_addr="local")


_ENGINES: list[Any] = []
"""Engines opened by this command; disposed when it ends (see :func:`main`)."""


def _factory(args: argparse.Namespace, *, upgrade: bool = True):
    from sqlalchemy.orm import sessionmaker

    from polarsvc.store.db import make_engine, upgrade_database

    engine = make_engine(_database_url(args))
    _ENGINES.append(engine)
    if upgrade:
        upgrade_database(engine)
    return sessionmaker(engine, expire_on_commit=False)


def is_loopback(host: str) -> bool:
    """Whether ``host`` names only this machine."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


# -- serve ---------------------------------------------------------------------------------
def _serve_database_url(args: argparse.Namespace) -> str:
    """The server's database: --database-url, else (demo) ./polarsvc-data/demo.db, else
    POLARSVC_DATABASE_URL or ./polarsvc-data/polarsvc.db (never the record it writes)."""
    from polarsvc.store.db import default_database_url

    if args.database_url:
        return args.database_url
    if args.demo:
        return f"sqlite:///{DEMO_DATABASE.resolve()}"
    return os.environ.get("POLARSVC_DATABASE_URL") or default_database_url()


def cmd_serve(args: argparse.Namespace) -> int:
    """Run the service. Every setting comes from its flag or else from its environment
    variable (table in DEVELOPERS.md, "Settings")."""
    import uvicorn

    from polarsvc.api.app import create_app
    from polarsvc.api.settings import Settings
    from polarsvc.serving import CannotServe, bind_listener, write_serving_record

    # a command-line flag turns a setting on; otherwise the environment decides
    environment = Settings.from_env(database_url="")
    public_reads = args.public_reads or args.demo or environment.public_reads
    read_only = args.read_only or environment.read_only
    if public_reads and not is_loopback(args.host) and not read_only:
        _stderr(
            f"refusing public reads with writes open on the non-loopback address {args.host}: "
            "add --read-only, or listen on 127.0.0.1"
        )
        return 2
    if args.fresh and (not args.demo or args.database_url):
        _stderr("--fresh starts the demo database ./polarsvc-data/demo.db anew: it needs "
                "--demo and no --database-url")
        return 2
    try:
        workers = _worker_count(args)
    except ValueError as exc:
        _stderr(f"polarsvc serve: {exc}")
        return 2
    if workers < 1:
        _stderr(f"polarsvc serve: --workers must be at least 1, got {workers}")
        return 2
    try:
        listener = bind_listener(args.host, args.port)
    except CannotServe as exc:
        _stderr(f"polarsvc serve: {exc}")
        return EXIT_CANNOT_SERVE
    try:
        database_url = _serve_database_url(args)
        settings = Settings.from_env(
            database_url=database_url, public_reads=public_reads, read_only=read_only,
            approved_only=args.approved_only or environment.approved_only,
        )
        secret = None
        if args.demo:
            secret, state = _prepare_demo(database_url, fresh=args.fresh)
            _stderr(f"demo database: {database_url} ({state}; public reads on)")
        else:
            _prepare_schema(database_url)
        address = f"http://{args.host}:{args.port}"
        write_serving_record(database_url=database_url, address=address, demo=args.demo)
        if secret is not None:
            _stderr(f"one-time local admin token (shown once, not stored in clear): {secret}")
        _stderr(f"polarsvc {__version__} on {address}/ (API docs: {address}/api/v1/docs)")
        if workers == 1:
            config = uvicorn.Config(
                create_app(settings), host=args.host, port=args.port, log_level=args.log_level
            )
            uvicorn.Server(config).run(sockets=[listener])
        else:
            _serve_workers(settings, listener, workers, args)
    finally:
        listener.close()
    return 0


def _worker_count(args: argparse.Namespace) -> int:
    """--workers, else POLARSVC_WORKERS, else 1."""
    if args.workers is not None:
        return int(args.workers)
    text = os.environ.get(WORKERS_ENV, "").strip()
    if not text:
        return 1
    try:
        return int(text)
    except ValueError:
        raise ValueError(f"{WORKERS_ENV}={text!r} is not a whole number") from None


def _serve_workers(settings: Any, listener: Any, workers: int, args: argparse.Namespace) -> None:
    """Serve with ``workers`` processes (uvicorn's supervisor) sharing the bound socket.

    The workers build the application from the environment
    (:func:`polarsvc.api.app.create_app_from_env`), so the settings travel there; the
    schema has been brought up to date before, so the workers start on a current database.
    """
    from uvicorn import Config
    from uvicorn.supervisors import Multiprocess

    os.environ.update({
        "POLARSVC_DATABASE_URL": settings.database_url,
        "POLARSVC_PUBLIC_READS": "1" if settings.public_reads else "0",
        "POLARSVC_READ_ONLY": "1" if settings.read_only else "0",
        "POLARSVC_APPROVED_ONLY": "1" if settings.approved_only else "0",
        "POLARSVC_MAX_UPLOAD_BYTES": str(settings.max_upload_bytes),
    })
    config = Config(
        "polarsvc.api.app:create_app_from_env", factory=True, host=args.host, port=args.port,
        log_level=args.log_level, workers=workers,
    )
    Multiprocess(config, sockets=[listener]).run()


def _prepare_schema(database_url: str) -> None:
    """Bring the schema up to date before serving, so that an unusable database is reported
    in one line (:class:`~polarsvc.store.errors.SchemaMismatch`) instead of from inside the
    server's start-up."""
    from polarsvc.store.db import make_engine, upgrade_database

    engine = make_engine(database_url)
    try:
        upgrade_database(engine)
    finally:
        engine.dispose()


def _prepare_demo(database_url: str, *, fresh: bool) -> tuple[str, str]:
    """Migrate the demo database, load the demo data into it when it holds no revisions
    (a new file, or ``fresh``: the old file removed first), and create a one-time admin
    token. Returns the token's secret and a description of the database's state."""
    from sqlalchemy import select
    from sqlalchemy.orm import sessionmaker

    from polarsvc.ingest import load_demo
    from polarsvc.store import tokens as token_store
    from polarsvc.store.db import make_engine, session_scope, upgrade_database
    from polarsvc.store.models import PolarRevision

    if fresh:
        for suffix in ("", "-wal", "-shm"):
            Path(f"{DEMO_DATABASE}{suffix}").unlink(missing_ok=True)
    DEMO_DATABASE.parent.mkdir(parents=True, exist_ok=True)
    engine = make_engine(database_url)
    try:
        upgrade_database(engine)
        factory = sessionmaker(engine, expire_on_commit=False)
        actor = _local_actor()
        with session_scope(factory, write=False) as session:
            empty = session.scalar(select(PolarRevision.id).limit(1)) is None
        if empty:
            seed_dir = next((d for d in SEED_DIRS if (d / "family.json").is_file()), None)
            if seed_dir is None:
                raise FileNotFoundError(
                    "demo data not found (looked in " + ", ".join(str(d) for d in SEED_DIRS)
                    + "); run from a checkout of polarsvc"
                )
            load_demo(factory, seed_dir, actor=actor)
            _store_default_blade_sets(factory)
            state = "fresh; demo data loaded"
        else:
            state = "kept from the last run with everything stored since; --fresh starts anew"
        name = "demo-admin-" + dt.datetime.now(dt.UTC).strftime("%Y%m%dT%H%M%S.%f")
        with session_scope(factory, write=True) as session:
            _, secret = token_store.create_token(session, name=name, role="admin", actor=actor)
    finally:
        engine.dispose()
    return secret, state


def _store_default_blade_sets(factory) -> None:
    """Compute and store each blade's station tables with the default settings, so the
    tables anonymous readers of the demo fetch first are stored, with a lineage (computed
    tables of anonymous requests are served but not stored)."""
    from polarsvc import pipeline
    from polarsvc.store import blades as blade_store
    from polarsvc.store.db import session_scope

    with session_scope(factory, write=False) as session:
        names = sorted({blade.name for blade in blade_store.list_blades(session)})
    for name in names:
        pipeline.blade_set(factory, blade_key=name, options={}, approved_only=False)


# -- db ------------------------------------------------------------------------------------
def cmd_db_upgrade(args: argparse.Namespace) -> int:
    _factory(args)
    print(f"database at {_database_url(args)} is at the newest schema")
    return 0


def cmd_db_backup(args: argparse.Namespace) -> int:
    from polarsvc.store.db import online_backup

    path = online_backup(_database_url(args), args.destination)
    print(f"backup written to {path}")
    return 0


# -- import / export -----------------------------------------------------------------------
METADATA_OPTIONS = (
    "airfoil", "family", "thickness", "reynolds", "mach", "surface", "source_kind",
    "reference", "facility", "measured_on", "contributor", "notes", "angle_unit",
)


def cmd_import(args: argparse.Namespace) -> int:
    from polarsvc.ingest import import_files, table_files

    defaults = {k: getattr(args, k) for k in METADATA_OPTIONS if getattr(args, k) is not None}
    files = table_files(Path(p) for p in args.paths)
    if not files:
        _stderr("no table files found")
        return 1
    factory = _factory(args)
    if args.create_families:
        _create_stated_families(factory, files, defaults)
    counts = {"stored": 0, "identical": 0, "refused": 0}
    for index, report in enumerate(
        import_files(factory, files, actor=_local_actor(), defaults=defaults,
                     override_quality=args.override_quality),
        start=1,
    ):
        counts[report.status] += 1
        detail = (
            f"refused: {report.error}" if report.error
            else f"{report.stored} stored, {report.identical} identical"
        )
        print(f"[{index}/{len(files)}] {report.path}: {report.status} ({detail})", flush=True)
        for flag in report.flags:
            print(f"    {format_flag(flag)}", flush=True)
    _stderr(
        f"{len(files)} files: {counts['stored']} stored, {counts['identical']} identical, "
        f"{counts['refused']} refused"
    )
    return 1 if counts["refused"] else 0


def format_flag(flag: dict[str, Any]) -> str:
    """One quality flag as a line of text: level, code, place and message."""
    where = ", ".join(
        part for part in (
            f"line {flag['line']}" if flag.get("line") is not None else "",
            f"field {flag['field']}" if flag.get("field") else "",
        ) if part
    )
    return f"{flag['level']} {flag['code']}" + (f" ({where})" if where else "") + \
        f": {flag['message']}"


def _create_stated_families(factory: Any, files: Sequence[Path], defaults: dict) -> None:
    """Create the families the files (or ``--family``) name, before importing them."""
    from polarsvc.formats import FormatError, parse_polar_file
    from polarsvc.store import airfoils as airfoil_store
    from polarsvc.store.db import session_scope

    names = set()
    for path in files:
        try:
            parsed = parse_polar_file(path.read_bytes(), filename=path.name, defaults=defaults)
        except (FormatError, OSError):
            continue  # the import itself reports the problem
        names.update(p.family for p in parsed if p.family)
    with session_scope(factory, write=True) as session:
        for name in sorted(names):
            _, created = airfoil_store.get_or_create_family(
                session, name=name, actor=_local_actor()
            )
            if created:
                _stderr(f"family {name!r} created")


def cmd_family(args: argparse.Namespace) -> int:
    from polarsvc.store import airfoils as airfoil_store
    from polarsvc.store.db import session_scope

    factory = _factory(args)
    with session_scope(factory, write=args.action != "list") as session:
        if args.action == "create":
            airfoil_store.create_family(
                session, name=args.name, description=args.description or "",
                actor=_local_actor(),
            )
            print(f"family {args.name!r} created")
        else:
            for family in airfoil_store.list_families(session):
                members = ", ".join(
                    f"{a.name} ({a.thickness:g}{', retired' if a.retired else ''})"
                    for a in sorted(family.airfoils, key=lambda a: a.thickness)
                )
                print(f"{family.name}\t{members}")
    return 0


def cmd_export(args: argparse.Namespace) -> int:
    from polarsvc.formats import polar_to_csv, polar_to_json
    from polarsvc.names import path_inside, safe_file_stem
    from polarsvc.store import polars as polar_store
    from polarsvc.store.db import session_scope

    destination = Path(args.destination)
    destination.mkdir(parents=True, exist_ok=True)
    factory = _factory(args)
    written = 0
    with session_scope(factory, write=False) as session:
        for revision in polar_store.list_revisions(
            session, airfoil=args.airfoil, family=args.family
        ):
            polar = polar_store.load_polar(revision)
            provenance = polar_store.revision_provenance(revision)
            family = revision.airfoil.family.name if revision.airfoil.family else None
            extra = {"family": family} if family else None
            # the file name comes from a safe form of the name; the name itself is in the file
            stem = f"{safe_file_stem(revision.airfoil.name)}_{revision.content_hash[:12]}"
            if args.format == "json":
                document = polar_to_json(
                    polar, airfoil=revision.airfoil.name, provenance=provenance,
                    extra_metadata=extra,
                )
                path_inside(destination, f"{stem}.json").write_text(
                    json.dumps(document, indent=1), encoding="utf-8"
                )
            else:
                text = polar_to_csv(
                    polar, airfoil=revision.airfoil.name, provenance=provenance,
                    extra_metadata=extra,
                )
                path_inside(destination, f"{stem}.csv").write_text(text, encoding="utf-8")
            written += 1
    print(f"{written} revisions written to {destination}")
    return 0


# -- fetch (through a running server) -------------------------------------------------------
def cmd_fetch(args: argparse.Namespace) -> int:
    import httpx

    server = _server_address(args).rstrip("/") + "/api/v1"
    params: dict[str, Any] = {"format": "zip" if args.what == "package" else args.format}
    for item in args.param or []:
        key, sep, value = item.partition("=")
        if not sep:
            _stderr(f"--param {item!r}: expected key=value")
            return 2
        params[key] = value
    if args.what in ("blade", "package"):
        path = f"/blades/{args.key}/tables"
    elif args.what == "performance":
        path = f"/blades/{args.key}/performance"
    elif args.what == "blend":
        path = f"/families/{args.key}/blend"
        params.update(thickness=args.thickness, reynolds=args.reynolds)
    elif args.what in ("extended", "augmented", "resampled"):
        path = f"/polars/{args.key}/{args.what}"
    else:
        path = f"/derived/{args.key}"
    headers = {"Authorization": f"Bearer {args.token}"} if args.token else {}
    response = httpx.get(server + path, params={k: v for k, v in params.items() if v is not None},
                         headers=headers, timeout=120.0)
    if response.status_code >= 400:
        _stderr(f"HTTP {response.status_code}: {response.text}")
        return 1
    output = Path(args.output) if args.output else None
    if output is None:
        sys.stdout.buffer.write(response.content)
    else:
        output.write_bytes(response.content)
        _stderr(
            f"wrote {output} ({len(response.content)} bytes; content hash "
            f"{response.headers.get('X-Polarsvc-Content-Hash')}, recipe "
            f"{response.headers.get('X-Polarsvc-Recipe-Hash')})"
        )
    return 0


# -- tokens, review, audit, lineage ----------------------------------------------------------
def cmd_token(args: argparse.Namespace) -> int:
    from polarsvc.store import tokens as token_store
    from polarsvc.store.db import session_scope

    factory = _factory(args)
    with session_scope(factory, write=args.action != "list") as session:
        if args.action == "create":
            expires = None
            if args.expires_days is not None:
                expires = dt.datetime.now(dt.UTC) + dt.timedelta(days=args.expires_days)
            token, secret = token_store.create_token(
                session, name=args.name, role=args.role, expires_at=expires,
                actor=_local_actor(),
            )
            print(secret)
            _stderr(f"token '{token.name}' ({token.role}) created; the secret above is shown "
                    "once and not stored")
        elif args.action == "revoke":
            token_store.revoke_token(session, name=args.name, actor=_local_actor())
            print(f"token '{args.name}' revoked")
        else:
            for token in token_store.list_tokens(session):
                state = "revoked" if token.revoked_at else "active"
                expiry = token.expires_at.isoformat() if token.expires_at else "never"
                print(f"{token.name}\t{token.role}\t{state}\texpires {expiry}")
    return 0


def cmd_review(args: argparse.Namespace) -> int:
    from polarsvc.store import polars as polar_store
    from polarsvc.store.db import session_scope

    factory = _factory(args)
    state = {"approve": "approved", "deprecate": "deprecated"}[args.action]
    with session_scope(factory, write=True) as session:
        revision = polar_store.set_review_state(
            session, content_hash=args.revision, state=state, reason=args.reason,
            replaced_by_hash=args.replaced_by,
            replacement_reason=getattr(args, "replacement_reason", None),
            actor=_local_actor(),
        )
        print(f"{revision.content_hash}: {revision.review_state}")
    return 0


PROVENANCE_OPTIONS = ("source_kind", "reference", "facility", "measured_on", "contributor",
                      "notes")


def cmd_correct(args: argparse.Namespace) -> int:
    from polarsvc.store import curation
    from polarsvc.store.db import session_scope

    changes = {k: getattr(args, k) for k in PROVENANCE_OPTIONS if getattr(args, k) is not None}
    with session_scope(_factory(args), write=True) as session:
        revision = curation.correct_provenance(
            session, content_hash=args.revision, changes=changes, reason=args.reason,
            actor=_local_actor(),
        )
        print(f"{revision.content_hash}: supersedes {revision.supersedes.content_hash}")
    return 0


def cmd_airfoil(args: argparse.Namespace) -> int:
    from polarsvc.store import curation
    from polarsvc.store.db import session_scope

    actor = _local_actor()
    with session_scope(_factory(args), write=True) as session:
        if args.action == "move":
            airfoil = curation.move_airfoil(
                session, name=args.name, family=None if args.family == "-" else args.family,
                reason=args.reason, actor=actor,
            )
            where = airfoil.family.name if airfoil.family else "no family"
            print(f"airfoil {airfoil.name!r} moved to {where}")
        elif args.action == "rename":
            airfoil = curation.rename_airfoil(
                session, name=args.name, new_name=args.new_name, reason=args.reason,
                actor=actor,
            )
            print(f"airfoil {args.name!r} renamed {airfoil.name!r} (the old name still "
                  "resolves)")
        else:
            airfoil = curation.set_retired(
                session, name=args.name, retired=args.action == "retire", reason=args.reason,
                actor=actor,
            )
            state = "retired from blends" if airfoil.retired else "reinstated"
            print(f"airfoil {airfoil.name!r} {state}")
    return 0


def cmd_audit(args: argparse.Namespace) -> int:
    from polarsvc.store import audit as audit_store
    from polarsvc.store.db import session_scope

    factory = _factory(args)
    with session_scope(factory, write=False) as session:
        events = audit_store.query_events(
            session, since=args.since, until=args.until, object_key=args.object,
            actor=args.actor, limit=args.limit,
        )
        for event in events:
            print(
                f"{event.occurred_at.isoformat()}\t{event.actor_name} ({event.actor_role})\t"
                f"{event.action}\t{event.object_kind}:{event.object_key}\t"
                f"{audit_change(event)}\t{event.remote_addr or '-'}"
            )
    return 0


def audit_change(event: Any) -> str:
    """What an audit event changed, as text: a state change with its reason (reviews,
    corrections: ``from -> to``), else the hashes before and after."""
    detail = json.loads(event.detail or "{}")
    if "from" in detail and "to" in detail:
        text = f"{_shown(detail['from'])} -> {_shown(detail['to'])}"
    else:
        text = f"{event.before_hash or '-'} -> {event.after_hash or '-'}"
    for key in ("reason", "replaced_by", "override"):
        if detail.get(key):
            text += f" ({key}: {detail[key]})"
    return text


def _shown(value: Any) -> str:
    if isinstance(value, dict):
        return ", ".join(f"{k}={v}" for k, v in value.items())
    return "-" if value is None else str(value)


def cmd_lineage(args: argparse.Namespace) -> int:
    from polarsvc import lineage, pipeline
    from polarsvc.store.db import session_scope

    factory = _factory(args)
    with session_scope(factory, write=False) as session:
        tree = lineage.lineage_of(session, pipeline.find_derived_all(session, args.key))
    if args.json:
        print(json.dumps(tree, indent=1))
    else:
        sys.stdout.write(lineage.lineage_text(tree))
    return 0


def cmd_verify(args: argparse.Namespace) -> int:
    from polarsvc import pipeline

    report = pipeline.verify_derived(_factory(args), args.key)
    print(json.dumps(report, indent=1))
    return 0 if report["matches"] else 1


# -- rotor performance (local database) --------------------------------------------------------
SPEC_HELP = (
    "BLADE[:key=value,...] -- a blade name or revision hash, then blade-set and rotor "
    "settings, e.g. skerry-48:rotation_model=none,approved_only=true,tip_loss=false,"
    "rated_power_w=2.5e6"
)


class SpecSyntaxError(ValueError):
    """A comparison side is not written as ``BLADE[:key=value,...]``."""


def _spec(text: str) -> Any:
    """A comparison side from ``BLADE[:key=value,...]`` (fields of the compare request)."""
    from polarsvc.api.schemas import BladeSetSpec, RotorOptionsIn

    blade, _, rest = text.partition(":")
    fields: dict[str, Any] = {"blade": blade}
    rotor: dict[str, Any] = {}
    turbine: dict[str, Any] = {}
    for item in filter(None, rest.split(",")):
        key, sep, value = item.partition("=")
        if not sep:
            raise SpecSyntaxError(f"{item!r}: expected key=value")
        parsed: Any = value
        if value.lower() in ("true", "false"):
            parsed = value.lower() == "true"
        else:
            try:
                parsed = float(value)
            except ValueError:
                parsed = value
        if key in RotorOptionsIn.model_fields:
            rotor[key] = parsed
        elif key in BladeSetSpec.model_fields:
            fields[key] = parsed
        else:
            turbine[key] = parsed
    if turbine:
        rotor["turbine"] = turbine
    return BladeSetSpec.model_validate({**fields, "rotor": rotor}, strict=False)


def _served_performance(factory: Any, spec: Any) -> Any:
    from polarsvc import pipeline
    from polarsvc.api.routers.rotor import spec_options

    options, rotor_options = spec_options(spec)
    return pipeline.rotor_performance(
        factory, blade_key=spec.blade, options=options, rotor_options=rotor_options,
        approved_only=bool(spec.approved_only),
    )


def _performance_text(served: Any) -> str:
    arrays = served.columns
    best_tsr, fine_pitch, cp_max = arrays["optimum"].tolist()
    rated = float(arrays["rated_wind_speed_m_s"][0])
    lines = [
        f"rotor result {served.content_hash}",
        f"  recipe {served.recipe_hash} on blade set {served.recipe['inputs']['blade_set']}",
        f"  Cp max {cp_max:.4f} at tip speed ratio {best_tsr:.3f}, pitch {fine_pitch:.3f} deg",
        "  rated wind speed " + (f"{rated:.3f} m/s" if rated == rated else "not reached"),
        "  annual energy (8766 h):",
    ]
    for label, energy, capacity in zip(served.reports["distributions"],
                                       arrays["annual_energy_wh"].tolist(),
                                       arrays["capacity_factor"].tolist(), strict=True):
        lines.append(f"    {label}: {energy / 1e6:.1f} MWh, capacity factor {capacity:.3f}")
    lines.append("  CAUTION: " + served.meta()["rotor_caution"])
    return "\n".join(lines) + "\n"


def cmd_performance(args: argparse.Namespace) -> int:
    try:
        spec = _spec(args.spec)
    except SpecSyntaxError as exc:
        _stderr(f"spec: {exc}")
        return 2
    served = _served_performance(_factory(args), spec)
    if args.json:
        from polarsvc.api.responses import dumps

        sys.stdout.buffer.write(dumps({**served.meta(), **served.columns}) + b"\n")
    else:
        sys.stdout.write(_performance_text(served))
    return 0


def cmd_compare(args: argparse.Namespace) -> int:
    from polarsvc import pipeline

    try:
        specs = [_spec(args.a), _spec(args.b)]
    except SpecSyntaxError as exc:
        _stderr(f"spec: {exc}")
        return 2
    factory = _factory(args)
    a, b = (_served_performance(factory, spec) for spec in specs)
    document = pipeline.compare_performance(a, b)
    if args.json:
        from polarsvc.api.responses import dumps

        sys.stdout.buffer.write(dumps(document) + b"\n")
        return 0
    lines = [f"b minus a: a = {a.content_hash[:16]}, b = {b.content_hash[:16]}"]
    for row in document["annual_energy"]:
        percent = row["delta_percent"]
        lines.append(f"  {row['distribution']}: {row['delta_mwh']:+.1f} MWh"
                     + ("" if percent is None else f" ({percent:+.2f} %)"))
    rated = document["at_rated_wind_speed"]
    if rated:
        for key in ("wind_speed_m_s", "thrust_n", "root_flap_moment_n_m",
                    "root_edge_moment_n_m"):
            lines.append(f"  at rated: {key} {rated[key]['a']:.6g} -> {rated[key]['b']:.6g}")
    differences = document["differences"]
    for change in differences["parameters"]:
        lines.append(f"  parameter {change['parameter']}: {change['a']!r} -> {change['b']!r}")
    for side in ("a", "b"):
        for revision in differences[f"revisions_only_in_{side}"]:
            lines.append(f"  only in {side}: {revision['revision'][:16]} {revision['airfoil']} "
                         f"Re={revision['reynolds']:g} [{revision['review_state']}]")
    lines.append("  CAUTION: " + document["rotor_caution"])
    sys.stdout.write("\n".join(lines) + "\n")
    return 0


def cmd_bundle(args: argparse.Namespace) -> int:
    from polarsvc import bundle

    factory = _factory(args)
    if args.action == "export":
        manifest = bundle.export_bundle(factory, Path(args.destination), family=args.family)
        print(json.dumps(manifest.as_dict(), indent=1))
        _stderr(f"bundle written to {args.destination}")
    else:
        report = bundle.import_bundle(factory, Path(args.source), actor=_local_actor())
        print(json.dumps(report.as_dict(), indent=1))
    return 0


def _aware_datetime(text: str) -> dt.datetime:
    value = dt.datetime.fromisoformat(text)
    return value if value.tzinfo else value.replace(tzinfo=dt.UTC)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``polarsvc`` command."""
    parser = argparse.ArgumentParser(
        prog="polarsvc",
        description="Section polar store and service for rotor work.",
    )
    parser.add_argument("--version", action="version", version=f"polarsvc {__version__}")
    parser.add_argument("--database-url", help="SQLAlchemy URL (default: POLARSVC_DATABASE_URL, "
                        "else the database `polarsvc serve` recorded in ./polarsvc-data/"
                        "serving.json, else ./polarsvc-data/polarsvc.db)")
    commands = parser.add_subparsers(dest="command", required=True)

    serve = commands.add_parser("serve", help="run the HTTP service")
    serve.add_argument("--host", default="127.0.0.1", help="listen address (default loopback)")
    serve.add_argument("--port", type=int, default=8000)
    serve.add_argument("--demo", action="store_true",
                       help="serve ./polarsvc-data/demo.db (the demo data loaded on first "
                       "start, kept across restarts); public reads; prints a one-time admin "
                       "token")
    serve.add_argument("--fresh", action="store_true",
                       help="with --demo: start the demo database anew")
    serve.add_argument("--public-reads", action="store_true", help="serve reads without a token")
    serve.add_argument("--read-only", action="store_true", help="refuse every write")
    serve.add_argument("--approved-only", action="store_true",
                       help="serve only approved revisions unless a request says otherwise")
    serve.add_argument("--log-level", default="info")
    serve.add_argument("--workers", type=int, default=None,
                       help=f"server processes sharing the port (default: {WORKERS_ENV} or 1); "
                       "for several workers on SQLite, writes queue through WAL and BEGIN "
                       "IMMEDIATE; a team uses PostgreSQL")
    serve.set_defaults(handler=cmd_serve)

    db = commands.add_parser("db", help="database maintenance")
    db_commands = db.add_subparsers(dest="db_command", required=True)
    upgrade = db_commands.add_parser("upgrade", help="apply migrations up to the newest schema")
    upgrade.set_defaults(handler=cmd_db_upgrade)
    backup = db_commands.add_parser("backup", help="online backup of the SQLite database")
    backup.add_argument("destination")
    backup.set_defaults(handler=cmd_db_backup)

    importer = commands.add_parser("import", help="import polar files or folders")
    importer.add_argument("paths", nargs="+")
    for option in METADATA_OPTIONS:
        importer.add_argument("--" + option.replace("_", "-"), dest=option,
                              help=f"{option} where a file does not state it")
    importer.add_argument("--create-families", action="store_true",
                          help="create the families the files name (otherwise a file naming "
                          "a family that does not exist is refused)")
    importer.add_argument("--override-quality", metavar="REASON",
                          help="store files despite error-level quality flags; the reason is "
                          "kept with each revision and in the audit trail")
    importer.set_defaults(handler=cmd_import)

    family = commands.add_parser("family", help="create or list airfoil families")
    family_commands = family.add_subparsers(dest="action", required=True)
    family_create = family_commands.add_parser("create")
    family_create.add_argument("name")
    family_create.add_argument("--description")
    family_create.set_defaults(handler=cmd_family)
    family_commands.add_parser("list").set_defaults(handler=cmd_family)

    exporter = commands.add_parser("export", help="write stored revisions to files")
    exporter.add_argument("destination")
    exporter.add_argument("--family")
    exporter.add_argument("--airfoil")
    exporter.add_argument("--format", choices=("csv", "json"), default="csv")
    exporter.set_defaults(handler=cmd_export)

    fetch = commands.add_parser("fetch", help="fetch a derived table or blade set from a server")
    fetch.add_argument("what", choices=("blade", "package", "performance", "blend", "extended",
                                        "augmented", "resampled", "derived"),
                       help="package: a blade's station package (zip: one table per station "
                       "plus manifest.json); performance: a blade set's rotor result")
    fetch.add_argument("key", help="blade name, family name, revision hash or derived hash")
    fetch.add_argument("--server", default=os.environ.get("POLARSVC_SERVER"),
                       help="server address (default: POLARSVC_SERVER, else the address "
                       "`polarsvc serve` recorded here, else http://127.0.0.1:8000)")
    fetch.add_argument("--token", default=os.environ.get("POLARSVC_TOKEN"))
    fetch.add_argument(
        "--format", choices=("json", "csv", "bin", "arrow", "npz"), default="csv"
    )
    fetch.add_argument("--thickness", type=float, help="blend: t/c as a fraction")
    fetch.add_argument("--reynolds", type=float, help="blend: Reynolds number")
    fetch.add_argument("--param", action="append", metavar="KEY=VALUE",
                       help="any other query parameter (repeatable)")
    fetch.add_argument("-o", "--output", help="file to write (default: standard output)")
    fetch.set_defaults(handler=cmd_fetch)

    perf = commands.add_parser(
        "performance", help="rotor performance of a blade set (steady BEM, power curve, energy)"
    )
    perf.add_argument("spec", help=SPEC_HELP)
    perf.add_argument("--json", action="store_true", help="the whole result as JSON")
    perf.set_defaults(handler=cmd_performance)

    compare = commands.add_parser("compare", help="compare the rotor performance of two "
                                  "blade sets (b minus a)")
    compare.add_argument("a", help=SPEC_HELP)
    compare.add_argument("b", help=SPEC_HELP)
    compare.add_argument("--json", action="store_true", help="the comparison as JSON")
    compare.set_defaults(handler=cmd_compare)

    token = commands.add_parser("token", help="create, revoke or list API tokens")
    token_commands = token.add_subparsers(dest="action", required=True)
    create = token_commands.add_parser("create")
    create.add_argument("name")
    create.add_argument("--role", choices=("reader", "curator", "admin"), required=True)
    create.add_argument("--expires-days", type=float)
    create.set_defaults(handler=cmd_token)
    revoke = token_commands.add_parser("revoke")
    revoke.add_argument("name")
    revoke.set_defaults(handler=cmd_token)
    token_commands.add_parser("list").set_defaults(handler=cmd_token)

    review = commands.add_parser("review", help="approve or deprecate a revision")
    review_commands = review.add_subparsers(dest="action", required=True)
    approve = review_commands.add_parser("approve")
    approve.add_argument("revision")
    approve.set_defaults(handler=cmd_review, reason=None, replaced_by=None)
    deprecate = review_commands.add_parser("deprecate")
    deprecate.add_argument("revision")
    deprecate.add_argument("--reason", required=True)
    deprecate.add_argument("--replaced-by",
                           help="the revision replacing this one (same airfoil, Reynolds "
                           "number, Mach number and surface, unless --replacement-reason)")
    deprecate.add_argument("--replacement-reason",
                           help="why a replacement at other conditions is right")
    deprecate.set_defaults(handler=cmd_review)
    correct = review_commands.add_parser(
        "correct", help="fix provenance fields by a new revision that supersedes this one")
    correct.add_argument("revision")
    correct.add_argument("--reason", required=True)
    for option in PROVENANCE_OPTIONS:
        correct.add_argument("--" + option.replace("_", "-"), dest=option,
                             help=f"corrected {option}")
    correct.set_defaults(handler=cmd_correct)

    airfoil = commands.add_parser(
        "airfoil", help="corrections: move, rename, retire from blends, reinstate")
    airfoil_commands = airfoil.add_subparsers(dest="action", required=True)
    move = airfoil_commands.add_parser("move", help="move to another family ('-': none)")
    move.add_argument("name")
    move.add_argument("family")
    rename = airfoil_commands.add_parser("rename", help="rename; the old name stays an alias")
    rename.add_argument("name")
    rename.add_argument("new_name")
    retire = airfoil_commands.add_parser("retire", help="leave family blends and blade sets")
    retire.add_argument("name")
    reinstate = airfoil_commands.add_parser("reinstate", help="undo a retirement")
    reinstate.add_argument("name")
    for command in (move, rename, retire, reinstate):
        command.add_argument("--reason", required=True)
        command.set_defaults(handler=cmd_airfoil)

    audit = commands.add_parser("audit", help="query the audit trail")
    audit.add_argument("--since", type=_aware_datetime, help="ISO time (UTC if no zone)")
    audit.add_argument("--until", type=_aware_datetime)
    audit.add_argument("--object", help="object key: a hash, name or token name")
    audit.add_argument("--actor", help="actor (token) name")
    audit.add_argument("--limit", type=int, default=1000)
    audit.set_defaults(handler=cmd_audit)

    lineage = commands.add_parser("lineage", help="where a derived table came from")
    lineage.add_argument("key", help="content or recipe hash (or unique prefix)")
    lineage.add_argument("--json", action="store_true")
    lineage.set_defaults(handler=cmd_lineage)

    bundle = commands.add_parser("bundle", help="portable export of the database, and import")
    bundle_commands = bundle.add_subparsers(dest="action", required=True)
    bundle_export = bundle_commands.add_parser("export", help="write a bundle folder")
    bundle_export.add_argument("destination", help="a new or empty folder")
    bundle_export.add_argument("--family", help="only this family (default: everything)")
    bundle_export.set_defaults(handler=cmd_bundle)
    bundle_import = bundle_commands.add_parser("import", help="load a bundle into an empty db")
    bundle_import.add_argument("source")
    bundle_import.set_defaults(handler=cmd_bundle)

    verify = commands.add_parser("verify", help="recompute a derived table and compare hashes")
    verify.add_argument("key")
    verify.set_defaults(handler=cmd_verify)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``polarsvc`` command."""
    parser = build_parser()
    args = parser.parse_args(argv)
    from polarsvc.aero.errors import AeroError
    from polarsvc.formats import FormatError
    from polarsvc.store.errors import SchemaMismatch, StoreError

    try:
        return int(args.handler(args))
    except SchemaMismatch as exc:
        _stderr(f"polarsvc {args.command}: {exc}")
        return EXIT_SCHEMA_MISMATCH
    except (AeroError, FormatError, StoreError, ValueError, OSError) as exc:
        _stderr(f"polarsvc {args.command}: {exc}")
        return 1
    finally:
        while _ENGINES:
            _ENGINES.pop().dispose()


if __name__ == "__main__":
    sys.exit(main())
