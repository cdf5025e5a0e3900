"""One circuit analysed: response figures, amplifier needs, sensitivities, time response, noise, inductors."""
