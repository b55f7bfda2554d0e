compare {input} --limits /dev/zero --csv {out}
