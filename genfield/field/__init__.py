"""The generative feature field: network, training, prior over codes, fitting, model file."""
