"""Issue 10 item 17: shape errors of the compiled path are named at trace time.

A vector `value=` or a state built for parameters of other leaf shapes used to end
in raw `lax` errors ("cond_fun must return a boolean scalar", "Cannot broadcast");
each now raises ValueError naming the argument, also under jax.jit. Invented
quadratics only.
"""

from __future__ import annotations

import jax
import jax.numpy as jnp
import pytest

import linestep.jax as lj


def square(x):
    return jnp.sum(x ** 2)


SEARCHES = {
    "fixed": lambda: lj.fixed(0.1),
    "armijo": lj.armijo,
    "nonmonotone_armijo": lj.nonmonotone_armijo,
    "wolfe": lj.wolfe,
    "barzilai_borwein": lj.barzilai_borwein,
}


@pytest.mark.parametrize("name", SEARCHES)
def test_a_vector_value_is_refused_naming_value(name):
    search = SEARCHES[name]()
    x = jnp.ones(3)
    with pytest.raises(ValueError, match=r"`value` must be the scalar f\(x\); got an array "
                                         r"of shape \(3,\)"):
        search.step(square, x, -2 * x, value=jnp.ones(3), gradient=2 * x,
                    state=search.begin(x))


def test_a_vector_value_is_refused_under_jit():
    search = lj.armijo()

    @jax.jit
    def run(x, value):
        return search.step(square, x, -2 * x, value=value, gradient=2 * x,
                           state=search.begin(x)).x

    with pytest.raises(ValueError, match="`value`"):
        run(jnp.ones(3), jnp.ones(3))


def test_a_barzilai_borwein_state_for_other_leaf_shapes_is_refused():
    search = lj.barzilai_borwein()
    x = jnp.ones(3)
    state = search.step(square, x, -2 * x, value=square(x), gradient=2 * x,
                        state=search.begin(x)).state
    y = jnp.ones(4)
    with pytest.raises(ValueError, match=r"`state` was built by begin\(\) for parameters of "
                                         r"leaf shapes \[\(3,\)\], but `x` has leaf shapes "
                                         r"\[\(4,\)\]"):
        search.step(square, y, -2 * y, value=square(y), gradient=2 * y, state=state)


def test_an_lbfgs_state_for_other_leaf_shapes_is_refused():
    direction = lj.lbfgs(memory=3)
    state = direction.begin(jnp.ones(3))
    with pytest.raises(ValueError, match="`state`.*L-BFGS buffers"):
        direction.propose(jnp.ones(4), jnp.ones(4), state)


def test_a_matching_state_still_works():
    search = lj.barzilai_borwein()
    x = jnp.array([1.0, -2.0, 0.5])
    out = search.step(square, x, -2 * x, value=square(x), gradient=2 * x,
                      state=search.begin(x))
    again = search.step(square, out.x, -2 * out.x, value=square(out.x), gradient=2 * out.x,
                        state=out.state)
    assert float(square(again.x)) < float(square(x))
