"""results"""
