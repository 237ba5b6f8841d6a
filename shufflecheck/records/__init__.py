"""What users record: card codes and deck definitions (:mod:`.cards`), one arrangement
checked against a deck (:mod:`.orders`), and logs of many deck orders (:mod:`.logs`)."""
