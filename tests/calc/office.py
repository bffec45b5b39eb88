"""A headless LibreOffice for tests, demos and benchmarks, started and stopped by PID.

Use Debian's /usr/bin/python3 (it has the `uno` module from python3-uno).

    from office import Office

    with Office(extensions=["build/addin/weft.oxt"], timeout=120) as office:
        doc = office.new_calc()
        sheet = doc.Sheets.getByIndex(0)
        sheet.getCellByPosition(0, 0).setFormula("=WEFT.VERSION()")
        doc.calculateAll()
        print(sheet.getCellByPosition(0, 0).getString())

What it does:
- makes a private profile in a new temporary folder (never the user's own), starts
  `soffice.bin --terminate_after_init` once to initialise it, and installs each
  extension with `unopkg add` into it;
- starts `soffice.bin --headless` on that profile, listening on a free local TCP
  port, and connects with retries (`office.ctx`, `office.smgr`, `office.desktop`);
- sets the profile to recalculate ODF and OOXML files on load (so a saved workbook
  always shows fresh add-in results);
- when run as root, runs unopkg and the office as the unprivileged user `nobody`
  (unopkg refuses root for a user profile);
- a watchdog kills the office (by its PID) when `timeout` seconds pass, so a hung
  call ends with an exception instead of a hung test; `stop()` (also on leaving the
  `with` block, even after an exception) terminates the office through UNO, waits on
  its PID, kills it if it does not exit, and removes the temporary folder; at
  interpreter exit, and on SIGTERM when the host has no handler of its own, a
  still-running office is killed too.

Environment: WEFT_OFFICE_PROGRAM overrides the program folder
(default /usr/lib/libreoffice/program). `env` adds variables for the office process
(e.g. {"WEFT_ADDIN_LOG": path}).
"""

import atexit
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

PROGRAM_DIR = os.environ.get("WEFT_OFFICE_PROGRAM", "/usr/lib/libreoffice/program")
if PROGRAM_DIR not in sys.path:
    sys.path.append(PROGRAM_DIR)

import uno  # noqa: E402  (python3-uno; needs /usr/bin/python3)
from com.sun.star.beans import PropertyValue  # noqa: E402

UNPRIVILEGED_UID = 65534  # nobody


class OfficeError(RuntimeError):
    """The office could not be prepared, started or reached."""


def _props(**values):
    out = []
    for name, value in values.items():
        p = PropertyValue()
        p.Name = name
        p.Value = value
        out.append(p)
    return tuple(out)


def _exit_on_sigterm(signum, frame):
    raise SystemExit(128 + signum)  # unwinds `with Office(...)` blocks, which stop it


def _free_port():
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Office:
    """One headless office on a private profile. See the module text."""

    def __init__(self, extensions=(), timeout=300, env=None, keep_profile=False):
        self.extensions = [os.path.abspath(e) for e in extensions]
        self.timeout = timeout
        self.extra_env = dict(env or {})
        self.keep_profile = keep_profile
        self.proc = None
        self.ctx = None
        self.smgr = None
        self.desktop = None
        self.tmpdir = None
        self.timed_out = False
        self._watchdog = None
        self._as_user = os.geteuid() == 0

    # -- public API -----------------------------------------------------------------

    def __enter__(self):
        try:
            self.start()
        except BaseException:
            self.stop()
            raise
        return self

    def __exit__(self, *exc):
        self.stop()
        return False

    @property
    def profile_url(self):
        return uno.systemPathToFileUrl(os.path.join(self.tmpdir, "profile"))

    def start(self):
        """Prepare the profile, install the extensions, start and connect."""
        self.tmpdir = tempfile.mkdtemp(prefix="weft-office-")
        os.chmod(self.tmpdir, 0o755)
        os.makedirs(os.path.join(self.tmpdir, "home"))
        self.work_dir = os.path.join(self.tmpdir, "work")  # files the office may write
        os.makedirs(self.work_dir)
        copies = []
        for i, ext in enumerate(self.extensions):
            if not os.path.isfile(ext):
                raise OfficeError(f"extension not found: {ext} (build it first)")
            dest = os.path.join(self.tmpdir, f"ext{i}-" + os.path.basename(ext))
            shutil.copyfile(ext, dest)
            copies.append(dest)
        self._chown_tree()
        self._start_watchdog()
        self._init_profile()
        for ext in copies:
            self._run([os.path.join(PROGRAM_DIR, "unopkg"), "add", "--suppress-license",
                       "-env:UserInstallation=" + self.profile_url, ext],
                      what="unopkg add " + os.path.basename(ext))
            self._remove_stale_lock()  # unopkg can leave its lock behind
        # Never leave an office behind: at interpreter exit, and on SIGTERM (e.g. a
        # test runner's timeout) unless the host installed its own handler.
        atexit.register(self._kill)
        if signal.getsignal(signal.SIGTERM) is signal.SIG_DFL:
            signal.signal(signal.SIGTERM, _exit_on_sigterm)
        for attempt in range(3):
            self._launch()
            self._connect()
            if self._is_ours():
                break
            # Another office took the free port first: we reached that one.
            self.desktop = self.smgr = self.ctx = None
            self._kill()
            self.proc.wait(timeout=20)
            self._log.close()
        else:
            raise OfficeError("could not reach an office on its own port in 3 attempts")
        self._set_recalc_on_load()

    def new_calc(self):
        """A new, empty spreadsheet document."""
        return self.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0,
                                                 _props(Hidden=True))

    def load(self, path):
        """Open a document file (recalculated on load for ODF and OOXML)."""
        url = uno.systemPathToFileUrl(os.path.abspath(path))
        return self.desktop.loadComponentFromURL(url, "_blank", 0, _props(Hidden=True))

    def load_copy(self, path):
        """Open a copy of a document placed in the office's own work folder: when we are
        root the office runs as an unprivileged user, who may not be able to read the
        source tree (a clone under a private folder)."""
        dest = os.path.join(self.work_dir, os.path.basename(path))
        shutil.copyfile(path, dest)
        if self._as_user:
            os.chown(dest, UNPRIVILEGED_UID, UNPRIVILEGED_UID)
        return self.load(dest)

    def save_as(self, doc, path, filter_name="calc8"):
        """Store doc to path with a filter ("calc8" .ods, "Calc Office Open XML" .xlsx)."""
        url = uno.systemPathToFileUrl(os.path.abspath(path))
        doc.storeToURL(url, _props(FilterName=filter_name))

    def service(self, name):
        """An instance of a UNO service in the office."""
        return self.smgr.createInstanceWithContext(name, self.ctx)

    def stop(self):
        """Terminate the office (through UNO, then by PID) and remove the profile."""
        if self._watchdog is not None:
            self._watchdog.cancel()
            self._watchdog = None
        if self.desktop is not None:
            try:
                self.desktop.terminate()
            except Exception:
                pass  # already gone, or disposed by the watchdog
        self.desktop = self.smgr = self.ctx = None
        if self.proc is not None:
            try:
                self.proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self._kill()
                self.proc.wait(timeout=20)
            self.proc = None
        if getattr(self, "_log", None) is not None:
            self._log.close()
            self._log = None
        if self.tmpdir and not self.keep_profile:
            shutil.rmtree(self.tmpdir, ignore_errors=True)
        self.tmpdir = None

    # -- internals --------------------------------------------------------------------

    def _env(self):
        env = dict(os.environ)
        env["HOME"] = os.path.join(self.tmpdir, "home")
        env.pop("DISPLAY", None)
        env.pop("UNO_TYPES", None)  # a client-side setting (see test_wizard.py)
        env.pop("SESSION_MANAGER", None)
        env.update(self.extra_env)
        return env

    def _prefix(self):
        if not self._as_user:
            return []
        return ["setpriv", f"--reuid={UNPRIVILEGED_UID}", f"--regid={UNPRIVILEGED_UID}",
                "--clear-groups", "--"]

    def _chown_tree(self):
        if not self._as_user:
            return
        for root, dirs, files in os.walk(self.tmpdir):
            for name in [root] + [os.path.join(root, n) for n in dirs + files]:
                os.chown(name, UNPRIVILEGED_UID, UNPRIVILEGED_UID)

    def _run(self, argv, what, allowed=(0,)):
        for attempt in range(3):
            res = subprocess.run(self._prefix() + argv, env=self._env(), cwd=self.tmpdir,
                                 stdin=subprocess.DEVNULL, capture_output=True, text=True,
                                 timeout=120)
            if res.returncode == 81 and attempt < 2:  # "restart me" after a first start
                continue
            if res.returncode not in allowed:
                raise OfficeError(f"{what} failed with exit code {res.returncode}:\n"
                                  f"{res.stdout}\n{res.stderr}")
            return res

    def _init_profile(self):
        # A profile that was never started is wiped at first start, so start it once.
        self._run([os.path.join(PROGRAM_DIR, "soffice.bin"), "--headless",
                   "--terminate_after_init", "--norestore", "--nolockcheck",
                   "-env:UserInstallation=" + self.profile_url],
                  what="profile initialisation", allowed=(0, 81))
        self._remove_stale_lock()

    def _remove_stale_lock(self):
        # Only called after the process that made it has exited, on our own
        # private profile: a lock left behind would make the next start refuse.
        lock = os.path.join(self.tmpdir, "profile", ".lock")
        if os.path.exists(lock):
            os.remove(lock)

    def _launch(self):
        self.port = _free_port()
        accept = f"socket,host=127.0.0.1,port={self.port};urp;StarOffice.ComponentContext"
        argv = self._prefix() + [
            os.path.join(PROGRAM_DIR, "soffice.bin"), "--headless", "--invisible",
            "--norestore", "--nolockcheck", "--nologo", "--nodefault",
            "-env:UserInstallation=" + self.profile_url, "--accept=" + accept]
        self.log_path = os.path.join(self.tmpdir, "office.log")
        self._log = open(self.log_path, "w")
        # A new session: the office and anything it starts share one process group
        # whose id is the office's PID, so they can be ended by that id.
        self.proc = subprocess.Popen(argv, env=self._env(), cwd=self.tmpdir,
                                     stdin=subprocess.DEVNULL, stdout=self._log,
                                     stderr=subprocess.STDOUT, start_new_session=True)

    def _connect(self):
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext(
            "com.sun.star.bridge.UnoUrlResolver", local)
        url = (f"uno:socket,host=127.0.0.1,port={self.port};urp;"
               "StarOffice.ComponentContext")
        deadline = time.monotonic() + 60
        last = None
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise OfficeError(f"the office exited with code {self.proc.returncode} "
                                  f"before accepting connections; see {self.log_path}")
            try:
                self.ctx = resolver.resolve(url)
                break
            except Exception as e:  # NoConnectException until the office listens
                last = e
                time.sleep(0.2)
        if self.ctx is None:
            raise OfficeError(f"could not connect to the office within 60 s: {last}")
        self.smgr = self.ctx.ServiceManager
        self.desktop = self.smgr.createInstanceWithContext("com.sun.star.frame.Desktop",
                                                           self.ctx)

    def _is_ours(self):
        """True when the office we reached runs on our private profile."""
        subst = self.service("com.sun.star.util.PathSubstitution")
        user = subst.getSubstituteVariableValue("$(user)")
        return user.startswith(self.profile_url)

    def _set_recalc_on_load(self):
        provider = self.service("com.sun.star.configuration.ConfigurationProvider")
        access = provider.createInstanceWithArguments(
            "com.sun.star.configuration.ConfigurationUpdateAccess",
            _props(nodepath="/org.openoffice.Office.Calc/Formula/Load"))
        access.setPropertyValue("ODFRecalcMode", 0)   # 0: always recalculate
        access.setPropertyValue("OOXMLRecalcMode", 0)
        access.commitChanges()

    def _start_watchdog(self):
        def fire():
            self.timed_out = True
            sys.stderr.write(f"office.py: timeout of {self.timeout} s reached; "
                             "killing the office\n")
            self._kill()
        self._watchdog = threading.Timer(self.timeout, fire)
        self._watchdog.daemon = True
        self._watchdog.start()

    def _kill(self):
        proc = self.proc
        if proc is None or proc.poll() is not None:
            return
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # the group whose id is the office's PID
        except ProcessLookupError:
            pass
        except PermissionError:
            proc.kill()
