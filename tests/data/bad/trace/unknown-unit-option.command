compare {input} --limits cispr32-class-b-conducted --unit dBW --csv {out}
