"""Parts stage: figures of merit of filters and of real inductors and capacitors."""
