"""Service functions: the frames DataFrame → zones, checks, sheets and stats, and the
one-off answers behind ``dof`` and ``stack``. Commands call these and render the result."""
