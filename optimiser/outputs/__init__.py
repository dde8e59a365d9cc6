"""What a run hands the builder: the results folder (CSV, designs, plots, summary), the winder's
order sheet and the report page."""
