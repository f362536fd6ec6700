"""scoring"""
