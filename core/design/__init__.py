"""From a target to parts: candidates, design procedures, standard-value search, comparison."""
