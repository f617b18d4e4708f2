"""What rules share: the context a rule's ``check(ctx)`` gets, memoised analyses, and
the helpers that turn engine facts into a finding's words and values."""
