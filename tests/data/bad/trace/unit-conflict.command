compare {input} --limits cispr32-class-b-conducted --unit dBuV --csv {out}
