"""The fast multi-loop circuit model: filament kernels, conductor cells, the magnetised pole, the loop
equations and the pull on the target."""
