"""``python -m talkthemes.cli``: the same as the ``talkthemes`` command."""

from talkthemes.cli import main

if __name__ == "__main__":
    main()
