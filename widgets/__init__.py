"""rankfold.widgets: the notebook explorer and its Altair views."""
