"""Allow ``python -m bcgen``."""


from bcgen.cli import console_main

console_main()
