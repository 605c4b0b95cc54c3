"""Import binding, checked against the Python Language Reference.

Sources: "The import system" (Language Reference §5), "The import statement" (§7.11),
"Naming and binding" (§4.2), and the library reference for `__import__` and
`importlib.import_module`. Each check names the passage it relies on.
"""

from __future__ import annotations

import textwrap

from .conftest import all_findings, at, findings, line_of


def src(text: str) -> str:
    return textwrap.dedent(text).lstrip("\n")


# ---------------------------------------------------------------------------- import a.b.c
def test_import_dotted_binds_top_level_package() -> None:
    code = src(
        """
        import heronframe.plotting
        heronframe.plotting.scatter_grid(1)
        plotting.scatter_grid(2)
        heronframe.stack()
        """
    )
    found = findings(code)
    # §7.11: "If the module being imported is not a top level module, then the name of the
    # top level package that contains the module is bound in the local namespace as a
    # reference to the top level package." So `heronframe` is bound ...
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 4, "HF-2") == "resolved"
    # ... and `plotting` is not bound at all: at most a guess from the name.
    assert at(found, 3, "HF-3") != "resolved"


def test_import_dotted_as_binds_the_submodule() -> None:
    code = src(
        """
        import heronframe.plotting as x
        x.scatter_grid()
        x.plotting.scatter_grid()
        """
    )
    found = findings(code)
    # §7.11: "If the module name is followed by as, then the name following as is bound
    # directly to the imported module", i.e. to heronframe.plotting, not to heronframe.
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 3, "HF-3") != "resolved"  # heronframe.plotting.plotting is not the member


def test_from_import_as() -> None:
    code = src(
        """
        from heronframe.plotting import scatter_grid as d
        d()
        scatter_grid()
        """
    )
    found = findings(code)
    # §7.11 (from form): "if the as clause is present, bind the value to the name following it";
    # the original name is not bound.
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 3, "HF-3") is None
    # The import itself names the moved member: a site a codemod must rewrite (common practice).
    assert at(found, 1, "HF-3") == "resolved"


def test_from_import_submodule_then_attribute() -> None:
    code = src(
        """
        from heronframe import plotting
        plotting.scatter_grid()
        """
    )
    # §7.11: `from a import b` binds b to the attribute a.b, which after importing is the
    # submodule a.b (§5.4.2 "Submodules").
    assert at(findings(code), 2, "HF-3") == "resolved"


def test_star_import_binds_public_names_only() -> None:
    code = src(
        """
        from heronframe import *
        stack()
        Table().stack_rows()
        _legacy_merge()
        """
    )
    found = findings(code)
    # §7.11: without __all__, "the set of public names includes all names found in the module's
    # namespace which do not begin with an underscore character".
    assert at(found, 2, "HF-2") == "resolved"
    assert at(found, 3, "HF-1") == "resolved"
    assert at(found, 4, "HF-10") != "resolved"


# ---------------------------------------------------------------------------- relative imports
PACKAGE = {
    "pkg/__init__.py": src(
        """
        from . import m
        m.hf.stack()
        """
    ),
    "pkg/m.py": src(
        """
        import heronframe as hf
        from heronframe import stack as st
        """
    ),
    "pkg/sub/__init__.py": "",
    "pkg/sub/mod.py": src(
        """
        from ..m import st
        st()
        from .. import m as mm
        mm.hf.stack()
        """
    ),
    "pkg/sub/other.py": src(
        """
        from .mod import st
        st()
        """
    ),
}


def test_relative_imports_inside_a_package() -> None:
    found = all_findings(PACKAGE)
    by_file = {(f.file, f.line, f.change, f.confidence.label) for f in found}
    # §5.7 "Package Relative Imports": a single leading dot is the current package, two dots
    # one package level up; `from . import m` inside pkg/__init__.py is pkg.m.
    assert ("pkg/__init__.py", 2, "HF-2", "resolved") in by_file
    # `from ..m import st` in pkg/sub/mod.py is pkg.m.st (§5.7).
    assert ("pkg/sub/mod.py", 2, "HF-2", "resolved") in by_file
    assert ("pkg/sub/mod.py", 4, "HF-2", "resolved") in by_file
    # `from .mod import st` in pkg/sub/other.py is pkg.sub.mod.st, re-exported from pkg.m.
    assert ("pkg/sub/other.py", 2, "HF-2", "resolved") in by_file


def test_relative_import_resolves_against_the_importing_package_not_the_script_dir() -> None:
    files = {
        "pkg/__init__.py": "",
        "pkg/helpers.py": "hf = None\n",  # same module name, no library here
        "pkg/sub/__init__.py": "",
        "pkg/sub/helpers.py": "import heronframe as hf\n",
        "pkg/sub/mod.py": src(
            """
            from ..helpers import hf
            hf.stack()
            from .helpers import hf
            hf.stack()
            """
        ),
    }
    found = findings(files, "pkg/sub/mod.py")
    # §5.7: `..helpers` is pkg.helpers (no library), `.helpers` is pkg.sub.helpers.
    assert at(found, 2, "HF-2") != "resolved"
    assert at(found, 4, "HF-2") == "resolved"


# ---------------------------------------------------------------------------- dynamic imports
def test_dunder_import_returns_the_top_level_package() -> None:
    code = src(
        """
        m = __import__("heronframe.plotting")
        m.plotting.scatter_grid()
        m.scatter_grid()
        """
    )
    found = findings(code)
    # Library reference, builtins `__import__`: "when the name variable is of the form
    # package.module, normally, the top-level package (the name up till the first dot) is
    # returned, not the module named by name".
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 3, "HF-3") != "resolved"


def test_dunder_import_with_fromlist_returns_the_submodule() -> None:
    code = src(
        """
        m = __import__("heronframe.plotting", fromlist=["scatter_grid"])
        m.scatter_grid()
        n = __import__("heronframe.plotting", None, None, ["scatter_grid"])
        n.scatter_grid()
        n.plotting.scatter_grid()
        """
    )
    found = findings(code)
    # Library reference, `__import__`: "However, when a non-empty fromlist argument is given,
    # the module named by name is returned." (fromlist is the fourth positional parameter.)
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 4, "HF-3") == "resolved"
    assert at(found, 5, "HF-3") != "resolved"


def test_importlib_import_module_returns_the_named_module() -> None:
    code = src(
        """
        import importlib
        m = importlib.import_module("heronframe.plotting")
        m.scatter_grid()
        m.plotting.scatter_grid()
        """
    )
    found = findings(code)
    # Library reference, importlib.import_module: "the specified package or module will be
    # returned (e.g. pkg.mod)", unlike __import__.
    assert at(found, 3, "HF-3") == "resolved"
    assert at(found, 4, "HF-3") != "resolved"


# ---------------------------------------------------------------------------- where the import runs
def test_function_local_import_binds_in_the_function_only() -> None:
    code = src(
        """
        def f():
            import heronframe as hf
            hf.stack()
        f()
        hf.stack()
        """
    )
    found = findings(code)
    # §4.2.1: "If a name is bound in a block, it is a local variable of that block"; an import
    # statement binds (§4.2.1 lists import statements among the binding constructs).
    assert at(found, 3, "HF-2") == "resolved"
    assert at(found, 5, "HF-2") != "resolved"


def test_try_import_except_importerror_fallback() -> None:
    code = src(
        """
        try:
            import heronframe as hf
        except ImportError:
            hf = None
        if hf is not None:
            hf.stack()
        hf.read_table("p").stack_rows()
        """
    )
    found = findings(code)
    # §7.11 / §8.4: the except clause only runs when the import raised; wherever `hf` is used
    # as a module the import succeeded, so the use is the library (common practice for
    # optional dependencies).
    assert at(found, 6, "HF-2") == "resolved"
    assert at(found, 7, "HF-1") == "resolved"


# ---------------------------------------------------------------------------- re-exports
def test_reexport_through_a_project_module() -> None:
    files = {
        "helpers.py": "import heronframe as hf\n",
        "main.py": "from helpers import hf\nhf.stack()\n",
    }
    # §7.11: `from helpers import hf` binds the object found as helpers.hf, which §5 makes the
    # module object heronframe.
    assert at(findings(files), 2, "HF-2") == "resolved"


def test_reexport_two_hops_with_renaming() -> None:
    files = {
        "a.py": "import heronframe as hf\n",
        "b.py": "from a import hf as h2\n",
        "c.py": "from b import h2\nh2.stack()\nh2.read_table('x').stack_rows()\n",
    }
    found = findings(files, "c.py")
    # §7.11 applied twice: c.h2 is b.h2 is a.hf is heronframe.
    assert at(found, 2, "HF-2") == "resolved"
    assert at(found, 3, "HF-1") == "resolved"


def test_reexport_through_package_module_alias() -> None:
    files = {
        "pkg/__init__.py": "",
        "pkg/helpers.py": "import heronframe as hf\n",
        "main.py": "import pkg.helpers as h\nh.hf.stack()\n",
    }
    # §7.11: `import pkg.helpers as h` binds h to the submodule pkg.helpers.
    assert at(findings(files), 2, "HF-2") == "resolved"


def test_reexported_function_under_a_new_name() -> None:
    files = {
        "tools.py": "from heronframe import stack as combine\n",
        "main.py": "import tools\ntools.combine()\n",
    }
    # §7.11: tools.combine is the object heronframe.stack.
    assert at(findings(files), 2, "HF-2") == "resolved"


# ---------------------------------------------------------------------------- no library, no findings
def test_project_that_never_imports_the_library_has_no_findings() -> None:
    files = {
        "main.py": src(
            """
            import pandas as pd
            from helpers import table
            table.stack_rows([1])
            df.sort_by("a", inplace=True)
            x.copy()
            x.append(1)
            stack()
            """
        ),
        "helpers.py": "table = object()\n",
    }
    # docs/findings.md: inferred and possible findings come only from files that import the
    # library, directly or through the project's own modules; a project that never uses the
    # library has no findings.
    assert all_findings(files) == []


def test_file_without_import_in_a_project_that_uses_the_library_elsewhere() -> None:
    files = {
        "uses.py": "import heronframe as hf\nhf.stack()\n",
        "main.py": "x.stack_rows()\n",
    }
    # docs/findings.md: guesses only in files that import the library directly or through project
    # modules; main.py does neither.
    assert findings(files) == []
    assert at(findings(files, "uses.py"), 2, "HF-2") == "resolved"


def test_names_in_strings_comments_and_docstrings_are_not_findings() -> None:
    code = src(
        '''
        """Module docstring: hf.stack() and t.stack_rows() are mentioned here."""
        import heronframe as hf
        # hf.stack(); t.stack_rows()
        s = "hf.stack() t.stack_rows()"
        b = b"heronframe.stack"
        f = f"{s} hf.stack_rows"
        def g():
            """hf.stack() in a docstring."""
            return 1
        '''
    )
    # Language Reference §2.1.3 (comments end at the line end and are ignored by the syntax)
    # and §2.4 (string literals are values, not names).
    assert findings(code) == []


def test_import_inside_a_class_body_binds_a_class_attribute() -> None:
    code = src(
        """
        class C:
            import heronframe as hf
            hf.stack()
            def m(self):
                self.hf.stack()
        """
    )
    found = findings(code)
    # §4.2.1: the import binds `hf` in the class block; it is used there directly.
    assert at(found, 3, "HF-2") == "resolved"
    # §3.2 "Class instances": an attribute not found on the instance is searched in the class,
    # so self.hf is the class attribute bound by the import.
    assert at(found, 5, "HF-2") == "resolved"


# ---------------------------------------------------------------------------- more import forms
def test_dunder_import_with_an_empty_fromlist_returns_the_top_level_package() -> None:
    code = src(
        """
        m = __import__("heronframe.plotting", globals(), locals(), [], 0)
        m.plotting.scatter_grid()
        m.scatter_grid()
        n = __import__("heronframe.plotting", fromlist=[])
        n.plotting.scatter_grid()
        n.scatter_grid()
        """
    )
    found = findings(code)
    # Library reference, `__import__`: the module named by name is returned only "when a
    # non-empty fromlist argument is given"; `[]` is empty, so the top-level package returns.
    assert at(found, 2, "HF-3") == "resolved"
    assert at(found, 3, "HF-3") != "resolved"
    assert at(found, 5, "HF-3") == "resolved"
    assert at(found, 6, "HF-3") != "resolved"


def test_importlib_import_module_relative_to_a_package_argument() -> None:
    code = src(
        """
        import importlib
        m = importlib.import_module(".plotting", package="heronframe")
        m.scatter_grid()
        n = importlib.import_module(".plotting", "heronframe")
        n.scatter_grid()
        """
    )
    found = findings(code)
    # Library reference, importlib.import_module: "If the name is specified in relative terms,
    # then the package argument must be set to the name of the package which is to act as the
    # anchor for resolving the package name (e.g. import_module('..mod', 'pkg.subpkg') will
    # import pkg.mod)."
    assert at(found, 3, "HF-3") == "resolved"
    assert at(found, 5, "HF-3") == "resolved"


def test_star_import_from_a_project_module_honours_dunder_all() -> None:
    files = {
        "helpers.py": src(
            """
            import heronframe as hf
            from heronframe import stack
            __all__ = ["stack"]
            """
        ),
        "main.py": "from helpers import *\nhf.stack()\nstack()\n",
    }
    found = findings(files)
    # §7.11: "The public names defined by a module are determined by checking the module's
    # namespace for a variable named __all__; if defined, it must be a sequence of strings which
    # are names defined or imported by that module." hf is not in __all__, so it is not bound.
    assert at(found, 2, "HF-2") != "resolved"
    assert at(found, 3, "HF-2") == "resolved"


def test_namespace_packages_without_init_files() -> None:
    files = {
        "pkg/sub/mod.py": "import heronframe as hf\n",
        "main.py": src(
            """
            import pkg.sub.mod
            pkg.sub.mod.hf.stack()
            from pkg.sub import mod
            mod.hf.stack()
            from pkg.sub.mod import hf
            hf.stack()
            """
        ),
    }
    found = findings(files)
    # PEP 420 (implicit namespace packages): a directory without __init__.py is a package, so
    # `import pkg.sub.mod` binds pkg and pkg.sub.mod is the module (§5.2.2, §5.4.2).
    assert at(found, 2, "HF-2") == "resolved"
    assert at(found, 4, "HF-2") == "resolved"
    assert at(found, 6, "HF-2") == "resolved"


def test_script_directory_is_first_on_the_path() -> None:
    files = {
        "scripts/helpers.py": "import heronframe as hf\n",
        "scripts/main.py": "from helpers import hf\nhf.stack()\n",
    }
    # Library reference, sys.path: "python script.py: prepend the script's directory".
    assert at(findings(files, "scripts/main.py"), 2, "HF-2") == "resolved"


def test_functions_and_classes_imported_from_project_modules() -> None:
    files = {
        "helpers.py": src(
            """
            import heronframe as hf
            def load(p):
                return hf.read_table(p)
            class MyTable(hf.Table):
                pass
            """
        ),
        "main.py": src(
            """
            from helpers import load, MyTable
            load(p).stack_rows()
            MyTable().stack_rows()
            class Leaf(MyTable):
                def stack_rows(self):
                    pass
            """
        ),
    }
    found = findings(files)
    # §7.11: the imported names are the function and class objects of helpers; calling them
    # gives what they return / an instance whose MRO contains heronframe.Table.
    assert at(found, 2, "HF-1") == "resolved"
    assert at(found, 3, "HF-1") == "resolved"
    # docs/change-list.md: an override in a subclass of a library class (here through a re-exported one).
    assert at(found, 5, "HF-1") == "resolved"


def test_guesses_are_allowed_in_files_that_reach_the_library_through_project_modules() -> None:
    files = {"helpers.py": "import heronframe as hf\n", "main.py": "import helpers\nx.stack_rows()\n"}
    # docs/findings.md: inferred findings come from files that import the library directly or
    # through the project's own modules.
    assert at(findings(files), 2, "HF-1") == "inferred"


def test_an_import_cycle_does_not_hide_the_library() -> None:
    files = {
        "a.py": "import b\nimport heronframe as hf\n",
        "b.py": "import a\na.hf.stack()\n",
        "main.py": "import b\n",
    }
    found = all_findings(files)
    # §5.3.1 (the module cache): with main importing b, b imports a, a's `import b` finds the
    # partly initialised b in sys.modules and continues, binding a.hf to heronframe before b
    # reads it. b.py reaches the library through a project module, so it gets at least the
    # guess that docs/findings.md allows there.
    b_sites = [f for f in found if f.file == "b.py" and f.line == 2 and f.change == "HF-2"]
    assert b_sites, found


def test_odd_imports_do_not_break_the_module() -> None:
    files = {
        "pkg/__init__.py": "from ... import x\nfrom .. import y\nimport heronframe as hf\nhf.stack()\n",
        "main.py": src(
            """
            import importlib
            import heronframe
            m = importlib.import_module(f"heronframe.{x}")
            m.stack()
            n = __import__(name)
            n.stack()
            """
        ),
    }
    # §5.7: a relative import beyond the top-level package raises ImportError at run time; the
    # rest of the module is still read. A module name known only at run time is not proof.
    assert at(findings(files, "pkg/__init__.py"), 4, "HF-2") == "resolved"
    found = findings(files)
    assert at(found, 4, "HF-2") not in (None, "resolved")
    assert at(found, 6, "HF-2") not in (None, "resolved")


def test_a_function_body_sees_a_cycle_completed() -> None:
    files = {
        "pkg/__init__.py": "from pkg.util import helper\nfrom pkg.model import Model\n",
        "pkg/util.py": src(
            """
            import heronframe as hf
            def helper(m):
                import pkg
                if isinstance(m, pkg.Model):
                    m.table.stack_rows(1)
                return pkg.Model().table
            def later():
                helper(0).stack_rows(2)
            """
        ),
        "pkg/model.py": src(
            """
            import heronframe as hf
            class Model:
                def __init__(self):
                    self.table = hf.read_table("p")
            """
        ),
    }
    found = [f for f in all_findings(files) if f.file == "pkg/util.py"]
    # The Language Reference, §4.2.2 and §5.3.1: a function's body runs when it is called, by
    # then `import pkg` finds the package whole; only code that runs while the cycle is being
    # imported sees it half-initialised. The first reading (pkg without Model yet) is replaced.
    assert at(found, 5, "HF-1") == "resolved"
    assert at(found, 8, "HF-1") == "resolved"
    assert len([f for f in found if f.line == 5]) == 1, found
