"""The ``hxtrain`` command (:mod:`.main`)."""
