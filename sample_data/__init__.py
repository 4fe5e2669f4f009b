"""The invented sample borrower (data only; installed as obligor_memo.sample_data)."""
