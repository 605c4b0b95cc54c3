"""Scopes and rebinding, checked against the Python Language Reference §4.2 "Naming and binding".

Each expectation is stated as the confidence of the finding (docs/findings.md): `resolved` only when an
unbroken chain proves the reference is the member; a name whose binding is not the library is
at most a guess (`inferred` for a library-specific member name, or no finding at all when the
value is known not to be the library).
"""

from __future__ import annotations

import textwrap

from .conftest import at, findings


def src(text: str) -> str:
    return textwrap.dedent(text).lstrip("\n")


def test_parameter_shadows_the_global() -> None:
    code = src(
        """
        import heronframe as hf
        def f(hf):
            hf.stack()
        f(1)
        hf.stack()
        """
    )
    found = findings(code)
    # §4.2.1: "If a name is bound in a block, it is a local variable of that block"; parameters
    # are bound in the function block (§4.2.1 lists formal parameters among binding constructs).
    # `stack` is a module's function: on a receiver that is not known, at most possible.
    assert at(found, 3, "HF-2") in ("possible", None)
    assert at(found, 5, "HF-2") == "resolved"


def test_lambda_parameter_shadows_the_global() -> None:
    code = "import heronframe as hf\nf = lambda hf: hf.stack()\nhf.stack()\n"
    found = findings(code)
    # §6.14 (lambda) + §4.2.1: a lambda's parameters are local to its block.
    assert at(found, 2, "HF-2") in ("possible", None)  # a module's function on an unknown receiver
    assert at(found, 3, "HF-2") == "resolved"


def test_class_body_names_are_not_visible_in_methods() -> None:
    shadowed = src(
        """
        import heronframe as hf
        class C:
            hf = 1
            def m(self):
                hf.stack()
        C().m()
        """
    )
    # §4.2.2: "The scope of names defined in a class block is limited to the class block; it
    # does not extend to the code blocks of methods". So `hf` in m is the module's import.
    assert at(findings(shadowed), 5, "HF-2") == "resolved"

    hidden = src(
        """
        class C:
            import heronframe as hf
            def m(self):
                hf.stack()
        C().m()
        """
    )
    # Same passage, the other way round: the class-level import is not visible in m.
    assert at(findings(hidden), 4, "HF-2") != "resolved"


def test_comprehension_variable_does_not_leak() -> None:
    code = src(
        """
        import heronframe as hf
        xs = [hf for hf in range(3)]
        hf.stack()
        ys = [hf.stack() for hf in range(3)]
        zs = {hf: 1 for hf in "ab"}
        hf.read_table("p").stack_rows()
        """
    )
    found = findings(code)
    # §6.2.4 "Displays for lists, sets and dictionaries": "the comprehension is executed in a
    # separate implicitly nested scope. This ensures that names assigned to in the target list
    # don't 'leak' into the enclosing scope." (Python 3)
    assert at(found, 3, "HF-2") == "resolved"
    assert at(found, 4, "HF-2") != "resolved"  # inside, hf is the loop variable
    assert at(found, 6, "HF-1") == "resolved"


def test_comprehension_first_iterable_is_evaluated_in_the_enclosing_scope() -> None:
    code = src(
        """
        import heronframe as hf
        class C:
            hf = None
            rows = [r for r in hf.stack()]
        """
    )
    # §6.2.4: "the iterable expression in the leftmost for clause is evaluated directly in the
    # enclosing scope"; here that is the class block, where hf is None. (The class attribute
    # shadows the import for code that runs in the class block itself, §4.2.2.)
    assert at(findings(code), 4, "HF-2") != "resolved"


def test_global_statement_binds_the_module_name() -> None:
    code = src(
        """
        def load():
            global hf
            import heronframe as hf
        load()
        hf.stack()
        """
    )
    # §7.12: "The global statement ... means that the listed identifiers are to be interpreted
    # as globals"; the import inside load() binds the module-level name.
    assert at(findings(code), 5, "HF-2") == "resolved"

    without = src(
        """
        def load():
            import heronframe as hf
        load()
        hf.stack()
        """
    )
    # §4.2.1: without `global`, the import binds a local of load().
    assert at(findings(without), 4, "HF-2") != "resolved"


def test_nonlocal_statement_binds_the_enclosing_function_name() -> None:
    code = src(
        """
        def outer():
            hf = 1
            def inner():
                nonlocal hf
                import heronframe as hf
            inner()
            hf.stack()
        outer()
        """
    )
    # §7.13: "The nonlocal statement causes the listed identifiers to refer to previously bound
    # variables in the nearest enclosing scope excluding globals."
    assert at(findings(code), 7, "HF-2") == "resolved"

    without = code.replace("        nonlocal hf\n", "        pass\n")
    # Without it, inner's import binds inner's own local and outer's hf stays 1.
    assert at(findings(without), 7, "HF-2") != "resolved"


def test_del_unbinds() -> None:
    code = src(
        """
        import heronframe as hf
        hf.stack()
        del hf
        hf.stack()
        """
    )
    found = findings(code)
    # §7.5: "Deletion of a name removes the binding of that name from the local or global
    # namespace"; the later use raises NameError, it is not the library.
    assert at(found, 2, "HF-2") == "resolved"
    assert at(found, 4, "HF-2") != "resolved"


def test_rebinding_in_straight_line_code() -> None:
    code = src(
        """
        import heronframe as hf
        hf.stack()
        hf = make_something_else()
        hf.stack()
        import heronframe as hf
        hf.stack()
        """
    )
    found = findings(code)
    # §4.2.1 / §7.2: an assignment rebinds the name; uses after it see the new object.
    assert at(found, 2, "HF-2") == "resolved"
    assert at(found, 4, "HF-2") != "resolved"
    assert at(found, 6, "HF-2") == "resolved"


def test_rebinding_to_a_literal_is_known_not_to_be_the_library() -> None:
    code = "import heronframe as hf\nhf = 'text'\nhf.stack()\n"
    # §7.2: hf is now a str; no reading of this line is the library member.
    assert at(findings(code), 3, "HF-2") is None


def test_function_sees_the_module_binding_at_call_time() -> None:
    code = src(
        """
        def f():
            hf.stack()
        import heronframe as hf
        f()
        """
    )
    # §4.2.2: free names of a function are looked up "in the global namespace" when the code
    # runs (§4.2.4 "Resolution of names"), so the call after the import sees the library.
    assert at(findings(code), 2, "HF-2") == "resolved"


def test_function_called_before_the_import_sees_no_library() -> None:
    code = src(
        """
        def f():
            hf.stack()
        f()
        import heronframe as hf
        """
    )
    # §4.2.2: at the time of the only call, the global `hf` is unbound (NameError).
    assert at(findings(code), 2, "HF-2") != "resolved"


def test_function_sees_a_later_rebinding_of_the_global() -> None:
    code = src(
        """
        import heronframe as hf
        def f():
            hf.stack()
        hf = 'text'
        f()
        """
    )
    # §4.2.2/§4.2.4: lookup happens at call time, after the global was rebound to a str.
    assert at(findings(code), 3, "HF-2") != "resolved"


def test_branch_merge_keeps_the_library_reading() -> None:
    code = src(
        """
        import heronframe as hf
        if flag:
            hf = 3
        hf.stack()
        """
    )
    # §8.1: either branch may run; on the path that skips it hf is the library and the call
    # is the member (docs/findings.md: a library value on a path that may run is kept after the branches).
    assert at(findings(code), 4, "HF-2") == "resolved"


def test_local_assignment_makes_the_name_local_for_the_whole_block() -> None:
    code = src(
        """
        import heronframe as hf
        def f():
            hf = 2
            return hf.stack()
        f()
        """
    )
    # §4.2.1/§4.2.2: hf is assigned in f, so every use of hf in f refers to the local.
    assert at(findings(code), 4, "HF-2") is None


def test_except_as_name_is_unbound_after_the_handler() -> None:
    code = src(
        """
        import heronframe as hf
        try:
            pass
        except Exception as hf:
            pass
        hf.stack()
        """
    )
    # §8.4: the except target is bound only when the handler runs (and is deleted at the end
    # of the handler); on the normal path hf is still the library.
    assert at(findings(code), 6, "HF-2") == "resolved"


def test_walrus_in_comprehension_binds_in_the_enclosing_scope() -> None:
    code = src(
        """
        import heronframe as hf
        found = [(t := hf.read_table(p)) for p in paths]
        t.stack_rows()
        """
    )
    # §6.2.4 / PEP 572: an assignment expression in a comprehension binds the target in the
    # containing scope.
    assert at(findings(code), 3, "HF-1") == "resolved"


def test_for_loop_target_rebinds() -> None:
    code = src(
        """
        import heronframe as hf
        for hf in range(3):
            pass
        hf.stack()
        """
    )
    found = findings(code)
    # §8.3: the for target is assigned in the enclosing scope and stays bound after the loop;
    # if the iterable is empty it is unchanged, so the library reading remains possible.
    assert at(found, 4, "HF-2") in ("resolved", "inferred")


def test_class_scope_does_not_extend_to_comprehensions_in_the_class_body() -> None:
    code = src(
        """
        import heronframe as hf
        class C:
            hf = 1
            xs = [hf.stack() for _ in range(2)]
        """
    )
    # §4.2.2: the class block's scope "does not extend to the code blocks of methods. This
    # includes comprehensions and generator expressions" -- hf in the element is the global.
    assert at(findings(code), 4, "HF-2") == "resolved"


def test_generator_expression_has_its_own_scope() -> None:
    code = "import heronframe as hf\ng = (hf for hf in range(2))\nhf.stack()\n"
    # §6.2.8 "Generator expressions": the same implicitly nested scope as comprehensions.
    assert at(findings(code), 3, "HF-2") == "resolved"


def test_lazy_initialisation_through_global() -> None:
    code = src(
        """
        hf = None
        def work():
            return hf.stack()
        def setup():
            global hf
            import heronframe as hf
        setup()
        work()
        """
    )
    # §7.12 + §4.2.4: setup() rebinds the module's hf before work() runs and looks it up.
    assert at(findings(code), 3, "HF-2") == "resolved"


def test_function_called_before_and_after_the_import() -> None:
    code = src(
        """
        def f():
            return hf.stack()
        try:
            f()
        except NameError:
            pass
        import heronframe as hf
        f()
        """
    )
    # §4.2.4 "Resolution of names": a free name is looked up each time the code runs; the
    # first call fails with NameError, the second call after the import uses the library.
    assert at(findings(code), 2, "HF-2") == "resolved"
