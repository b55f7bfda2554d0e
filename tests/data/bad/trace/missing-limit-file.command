compare {input} --limits no-such-limits.toml --csv {out}
