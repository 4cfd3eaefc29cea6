"""placeholder"""
import streamlit as st
st.write("coming")
