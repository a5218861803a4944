"""How sure a fit is: bootstrap, influence of single results, posterior, next trials."""
