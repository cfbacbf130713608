"""responses"""
