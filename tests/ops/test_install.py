#!/usr/bin/python3
"""test_install.py: `meson install --destdir` puts every file where the system expects it.

Run by meson as: test_install.py MESON BUILD_ROOT SOURCE_ROOT. Installs the build tree twice
into a temporary DESTDIR and checks: the programs (and that they run), the systemd units in
the directory systemd's pkg-config file names (pkg-config, Debian package systemd), their
ExecStart naming the installed daemon, the manual pages under mandir/manN, and the example
configuration as /etc/gritline/gritline.conf, kept as it is by the second install once an
installer has edited it. Where systemd-analyze is there, `systemd-analyze verify --root=`
judges the installed units (systemd 252's own parser: unknown keys, bad values, a missing
binary).
"""
import filecmp
import json
import os
import shutil
import stat
import subprocess
import sys
import tempfile
import unittest

MESON = sys.argv.pop(1) if len(sys.argv) > 1 else "meson"
BUILD = sys.argv.pop(1) if len(sys.argv) > 1 else "build"
ROOT = sys.argv.pop(1) if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "..")
EXAMPLE = os.path.join(ROOT, "conf", "gritline.conf.example")
CONF = "/etc/gritline/gritline.conf"


def options():
    """The build's directory options, from meson's own introspection."""
    out = subprocess.run([MESON, "introspect", "--buildoptions", BUILD], capture_output=True, text=True,
                         check=True, timeout=60).stdout
    return {o["name"]: o["value"] for o in json.loads(out)}


def unit_dir(prefix):
    """Where systemd looks for system units: its pkg-config variable (systemd.pc), else prefix/lib."""
    if shutil.which("pkg-config"):
        run = subprocess.run(["pkg-config", "--variable=systemdsystemunitdir", "systemd"], capture_output=True,
                             text=True, timeout=30)
        if run.returncode == 0 and run.stdout.strip():
            return run.stdout.strip()
    return os.path.join(prefix, "lib", "systemd", "system")


def under(dest, path):
    return os.path.join(dest, path.lstrip("/"))


def full(opts, key):
    value = opts[key]
    return value if os.path.isabs(value) else os.path.join(opts["prefix"], value)


class Install(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.opts = options()
        cls.tmp = tempfile.TemporaryDirectory(prefix="gritline-install-")
        cls.dest = cls.tmp.name
        cls.first = cls.install()

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    @classmethod
    def install(cls):
        # --no-rebuild: meson test has built everything; the tree is not touched.
        run = subprocess.run([MESON, "install", "-C", BUILD, "--no-rebuild", "--destdir", cls.dest],
                             capture_output=True, text=True, timeout=120)
        if run.returncode != 0:
            raise AssertionError("meson install failed:\n" + run.stdout + run.stderr)
        return run

    def test_programs(self):
        sbin, bindir = full(self.opts, "sbindir"), full(self.opts, "bindir")
        for path in (os.path.join(sbin, "gritlined"), os.path.join(bindir, "gritline"),
                     os.path.join(bindir, "gritline-sim")):
            with self.subTest(path=path):
                real = under(self.dest, path)
                self.assertTrue(os.path.isfile(real), real)
                self.assertTrue(os.stat(real).st_mode & stat.S_IXUSR, real)
        run = subprocess.run([under(self.dest, os.path.join(sbin, "gritlined")), "--version"], capture_output=True,
                             text=True, timeout=30)
        self.assertEqual(run.returncode, 0)
        self.assertTrue(run.stdout.startswith("gritlined "), run.stdout)

    def test_units(self):
        folder = under(self.dest, unit_dir(self.opts["prefix"]))
        daemon = os.path.join(full(self.opts, "sbindir"), "gritlined")
        for unit in ("gritlined.service", "gritlined@.service"):
            with self.subTest(unit=unit):
                path = os.path.join(folder, unit)
                self.assertTrue(os.path.isfile(path), path)
                with open(path, encoding="utf-8") as f:
                    lines = f.read().splitlines()
                starts = [line for line in lines if line.startswith("ExecStart=")]
                self.assertEqual(len(starts), 1)
                self.assertTrue(starts[0].startswith("ExecStart=" + daemon + " --config /etc/gritline/"), starts[0])
                with open(os.path.join(ROOT, "conf", unit), encoding="utf-8") as f:
                    source = f.read().splitlines()
                # Only the command's path differs from the file in the tree.
                self.assertEqual([x for x in lines if not x.startswith("ExecStart=")],
                                 [x for x in source if not x.startswith("ExecStart=")])

    @unittest.skipIf(shutil.which("systemd-analyze") is None, "systemd-analyze not installed (package systemd)")
    def test_units_verify(self):
        folder = under(self.dest, unit_dir(self.opts["prefix"]))
        daemon = os.path.join(full(self.opts, "sbindir"), "gritlined")
        with tempfile.TemporaryDirectory() as tmp:
            # The installed units, with the daemon's path inside DESTDIR so the check finds
            # it; a template is verified through an instance of it.
            for unit, name in (("gritlined.service", "gritlined.service"), ("gritlined@.service", "gritlined@sg4.service")):
                with open(os.path.join(folder, unit), encoding="utf-8") as f:
                    text = f.read().replace("ExecStart=" + daemon + " ", "ExecStart=" + under(self.dest, daemon) + " ")
                path = os.path.join(tmp, name)
                with open(path, "w", encoding="utf-8") as f:
                    f.write(text)
                with self.subTest(unit=name):
                    run = subprocess.run(["systemd-analyze", "verify", "--man=no", "--generators=no", path],
                                         capture_output=True, text=True, timeout=60)
                    self.assertEqual(run.returncode, 0, run.stdout + run.stderr)
                    own = [line for line in (run.stdout + run.stderr).splitlines() if "gritlined" in line]
                    self.assertEqual(own, [], "\n".join(own))

    def test_manual_pages(self):
        if not shutil.which("scdoc"):
            self.skipTest("scdoc not installed: no manual pages are built")
        mandir = full(self.opts, "mandir")
        for page, section in (("gritlined", "8"), ("gritline", "1"), ("gritline.conf", "5"), ("gritline-sim", "1")):
            with self.subTest(page=page):
                path = under(self.dest, os.path.join(mandir, "man" + section, page + "." + section))
                self.assertTrue(os.path.isfile(path), path)
                with open(path, encoding="utf-8") as f:
                    head = f.read(4096)
                # man(7): the title line names the page and its section.
                self.assertRegex(head, r'(?m)^\.TH "%s" "%s"' % (page.replace(".", r"\.").replace("-", r"\\?-"), section))

    def test_config_installed_and_kept(self):
        conf = under(self.dest, CONF)
        self.assertTrue(filecmp.cmp(conf, EXAMPLE, shallow=False), "the installed configuration is not the example")
        self.assertEqual(stat.S_IMODE(os.stat(conf).st_mode), 0o644)
        # An installer's edit survives a second install.
        with open(conf, "a", encoding="utf-8") as f:
            f.write("; edited by the installer\n")
        with open(conf, encoding="utf-8") as f:
            edited = f.read()
        self.install()
        with open(conf, encoding="utf-8") as f:
            self.assertEqual(f.read(), edited)
        self.assertEqual([n for n in os.listdir(os.path.dirname(conf))], ["gritline.conf"])


if __name__ == "__main__":
    unittest.main(verbosity=2)
